// Worker-thread entry: signs the batches of texts it is sent and moves the typed arrays back.
import { parentPort, workerData } from "node:worker_threads";
import { BatchSigner, type SignerParams } from "./signer.js";

if (!parentPort) throw new Error("dedup/worker.js must run in a worker thread");
const port = parentPort;
const signer = new BatchSigner(workerData as SignerParams);

port.on("message", (texts: string[]) => {
  try {
    const r = signer.sign(texts);
    port.postMessage({ result: r }, [r.signatures.buffer, r.bandKeys.buffer, r.short.buffer] as ArrayBuffer[]);
  } catch (err) {
    port.postMessage({ error: { message: (err as Error)?.message ?? String(err) } });
  }
});
