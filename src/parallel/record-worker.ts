// Worker-thread entry for the per-record stages: runs batches of frames and sends the result frames back, moving the buffer.
import { parentPort, workerData } from "node:worker_threads";
import { batchHandler, RecordError, type BatchInit } from "./record-batch.js";

if (!parentPort) throw new Error("record-worker.js must run in a worker thread");
const port = parentPort;
const handle = await batchHandler(workerData as BatchInit);

port.on("message", async (frames: Uint8Array) => {
  try {
    const result = await handle(frames);
    port.postMessage({ result }, [result.frames.buffer as ArrayBuffer]);
  } catch (err) {
    port.postMessage({ error: { message: (err as Error)?.message ?? String(err), where: err instanceof RecordError ? err.where : undefined } });
  }
});
