// Worker-thread entry: signs the batches of texts it is sent and transfers the typed arrays back.
import { parentPort, workerData } from "node:worker_threads";
import { BatchSigner, type SignerParams } from "./signer.js";

if (!parentPort) throw new Error("dedup/worker.js must run in a worker thread");
const port = parentPort;
const signer = new BatchSigner(workerData as SignerParams);

port.on("message", (msg: { id: number; texts: string[] }) => {
  const r = signer.sign(msg.texts);
  port.postMessage({ id: msg.id, result: r }, [r.signatures.buffer, r.bandKeys.buffer, r.short.buffer] as ArrayBuffer[]);
});
