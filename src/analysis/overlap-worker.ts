// Worker-thread entry for the overlap analysis: holds the split statistics and answers each batch with an acknowledgement.
import { parentPort, workerData } from "node:worker_threads";
import { SplitOverlap, type OverlapParams } from "../overlap/split-overlap.js";
import { loadHasher } from "../lib/hash.js";
import type { OverlapMessage } from "./overlap-runner.js";

if (!parentPort) throw new Error("overlap-worker.js must run in a worker thread");
const port = parentPort;
await loadHasher();
const counter = new SplitOverlap(workerData as OverlapParams);

port.on("message", (msg: OverlapMessage) => {
  try {
    if (msg.add) {
      for (const a of msg.add) counter.add(a.split, a.text, a.tokens);
      port.postMessage({ ack: true });
    } else port.postMessage({ figures: counter.finish() });
  } catch (err) {
    port.postMessage({ error: (err as Error)?.message ?? String(err) });
  }
});
