// The pool that runs per-record stages on batches, in worker threads when the stages are built-in
// (a worker can rebuild them from their names and options) and more than one thread is asked for.
import { WorkerPool, compiledModule } from "./pool.js";
import { batchHandler, type BatchInit, type BatchOut } from "./record-batch.js";
import { BUILTIN_STAGES } from "../stages/index.js";

/** Takes a buffer of record frames (moved to the worker), gives back the result frames. */
export type RecordPool = WorkerPool<Uint8Array, BatchOut>;

/** Records per batch, and frame bytes per batch: large enough to amortise a message, small enough to keep every thread busy. */
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
  return new WorkerPool<Uint8Array, BatchOut>({
    module: builtin && init.stages.length > 0 ? compiledModule("./record-worker.js", import.meta.url) : undefined,
    init,
    threads,
    local: () => batchHandler(init),
    transfer: (frames) => [frames.buffer as ArrayBuffer],
  });
}
