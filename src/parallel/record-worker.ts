// Worker-thread entry for the per-record stages: runs batches and sends results back, moving the token buffer.
import { parentPort, workerData } from "node:worker_threads";
import { batchHandler, RecordError, type BatchInit, type BatchItem } from "./record-batch.js";

if (!parentPort) throw new Error("record-worker.js must run in a worker thread");
const port = parentPort;
const handle = await batchHandler(workerData as BatchInit);

port.on("message", async (items: BatchItem[]) => {
  try {
    const result = await handle(items);
    port.postMessage({ result }, [result.tokens.buffer as ArrayBuffer, result.ends.buffer as ArrayBuffer]);
  } catch (err) {
    port.postMessage({ error: { message: (err as Error)?.message ?? String(err), where: err instanceof RecordError ? err.where : undefined } });
  }
});
