// Signing batches of texts on worker threads, or in-thread; results are the same either way.
import { WorkerPool, compiledModule } from "../parallel/pool.js";
import { BatchSigner, type BatchResult, type SignerParams } from "./signer.js";

/**
 * Signs batches with `threads` worker threads (0 or 1: in the calling thread). Every batch is
 * signed by the same deterministic function of (params, texts) wherever it runs, and callers
 * consume results in submission order, so the outcome does not depend on the number of threads.
 */
export class SignerPool {
  private readonly pool: WorkerPool<string[], BatchResult>;

  constructor(params: SignerParams, threads: number) {
    this.pool = new WorkerPool<string[], BatchResult>({
      module: compiledModule("./worker.js", import.meta.url),
      init: params,
      threads,
      name: "dedup signing worker",
      local: async () => {
        const signer = new BatchSigner(params);
        return async (texts) => signer.sign(texts);
      },
    });
  }

  /** Threads signing (1 when signing happens in the calling thread). */
  get threads(): number {
    return this.pool.threads;
  }

  submit(texts: string[]): Promise<BatchResult> {
    return this.pool.submit(texts);
  }

  close(): Promise<void> {
    return this.pool.close();
  }
}
