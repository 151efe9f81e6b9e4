// The pool that runs per-record stages on batches, in worker threads when the stages are built-in
// (a worker can rebuild them from their names and options) and more than one thread is asked for.
import { WorkerPool, compiledModule } from "./pool.js";
import { batchHandler, type BatchInit, type BatchItem, type BatchOut } from "./record-batch.js";
import { BUILTIN_STAGES } from "../stages/index.js";

export type RecordPool = WorkerPool<BatchItem[], BatchOut>;

/** Records per batch, and text bytes per batch: large enough to amortise a message, small enough to keep every thread busy. */
export const BATCH_RECORDS = 256;
export const BATCH_BYTES = 1 << 20;
/**
 * Batches in flight. Fixed, not derived from the thread count: how far a batching stage reads
 * ahead decides when upstream stages log their drops, and the ledger must not depend on the
 * number of threads. 16 keeps up to 16 threads busy.
 */
export const BATCHES_AHEAD = 16;

export function recordPool(init: BatchInit, threads: number): RecordPool {
  const builtin = init.stages.every((s) => BUILTIN_STAGES.has(s.name));
  return new WorkerPool<BatchItem[], BatchOut>({
    module: builtin && init.stages.length > 0 ? compiledModule("./record-worker.js", import.meta.url) : undefined,
    init,
    threads,
    local: () => batchHandler(init),
  });
}

/** Groups a stream into batches of at most BATCH_RECORDS items or about BATCH_BYTES of text (`bytesOf` an item). */
export async function* batched<T>(items: AsyncIterable<T>, bytesOf: (item: T) => number): AsyncGenerator<T[]> {
  let batch: T[] = [];
  let bytes = 0;
  for await (const item of items) {
    batch.push(item);
    bytes += bytesOf(item);
    if (batch.length >= BATCH_RECORDS || bytes >= BATCH_BYTES) {
      yield batch;
      batch = [];
      bytes = 0;
    }
  }
  if (batch.length > 0) yield batch;
}
