// Worker-thread entry of the overlap hashing: answers each batch of texts with its hashes, moving the typed arrays back.
import { parentPort, workerData } from "node:worker_threads";
import { loadHasher } from "../lib/hash.js";
import { DocHasher, transferList, type HashParams } from "./overlap-hash.js";

if (!parentPort) throw new Error("overlap-hash-worker.js must run in a worker thread");
const port = parentPort;
// Messages posted before the listener below is attached wait in the port's queue.
await loadHasher();
const hasher = new DocHasher(workerData as HashParams);

port.on("message", (texts: string[]) => {
  try {
    const r = hasher.hash(texts);
    port.postMessage({ result: r }, transferList(r));
  } catch (err) {
    port.postMessage({ error: { message: (err as Error)?.message ?? String(err) } });
  }
});
