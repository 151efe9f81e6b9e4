// Worker-thread entry of the overlap hashing: answers each batch of texts with its hashes, moving the typed arrays back.
import { parentPort, workerData } from "node:worker_threads";
import { loadHasher } from "../lib/hash.js";
import { DocHasher, transferList, type HashParams, type HashRequest } from "./overlap-hash.js";

if (!parentPort) throw new Error("overlap-hash-worker.js must run in a worker thread");
const port = parentPort;
// Messages posted before the listener below is attached wait in the port's queue.
await loadHasher();
const hasher = new DocHasher(workerData as HashParams);

port.on("message", (req: HashRequest) => {
  try {
    const r = hasher.hash(req);
    port.postMessage({ result: r }, transferList(r));
  } catch (err) {
    port.postMessage({ error: { message: (err as Error)?.message ?? String(err) } });
  }
});
