// A pool of worker threads signing batches of texts, or the same work in-thread; results are the same either way.
import { Worker } from "node:worker_threads";
import { existsSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { BatchSigner, type BatchResult, type SignerParams } from "./signer.js";

interface Job {
  id: number;
  texts: string[];
  resolve(r: BatchResult): void;
  reject(e: unknown): void;
}

/**
 * The compiled worker module beside this file, or undefined when it cannot run: under a test runner
 * that executes the .ts sources there is no worker.js beside them, and the pool works in-thread.
 */
export function workerModule(): URL | undefined {
  if (!import.meta.url.endsWith(".js")) return undefined;
  const url = new URL("./worker.js", import.meta.url);
  return existsSync(fileURLToPath(url)) ? url : undefined;
}

/**
 * Signs batches with `threads` worker threads (none: in the calling thread). Every batch is signed by
 * the same deterministic function of (params, texts) wherever it runs, and callers consume results in
 * submission order, so the outcome does not depend on the number of threads or their timing.
 */
export class SignerPool {
  readonly threads: number;
  private readonly local: BatchSigner | undefined;
  private readonly workers: Worker[] = [];
  private readonly idle: Worker[] = [];
  private readonly queue: Job[] = [];
  private readonly running = new Map<Worker, Job>();
  private nextId = 0;
  private failure: unknown;

  private readonly url: URL | undefined;
  private readonly params: SignerParams;

  constructor(params: SignerParams, threads: number) {
    this.params = params;
    this.url = threads > 0 ? workerModule() : undefined;
    this.threads = this.url ? threads : 0;
    if (!this.url) this.local = new BatchSigner(params);
  }

  /**
   * Workers start only when a batch is waiting for one, so every worker has work by the time it has
   * loaded and a small input never starts threads it does not need. A worker holds the event loop
   * open only while it has a batch (the caller is waiting for it); idle, it can never keep the process
   * alive on its own.
   */
  private spawn(): void {
    const w = new Worker(this.url!, { workerData: this.params });
    w.unref();
    w.on("message", (msg: { id: number; result: BatchResult }) => this.done(w, msg.result));
    w.on("error", (e) => this.fail(e));
    w.on("exit", (code) => {
      if (code !== 0) this.fail(new Error(`dedup signing worker exited with code ${code}`));
    });
    this.workers.push(w);
    this.idle.push(w);
  }

  /** Signs `texts`; the promise settles with the batch's signatures and band keys. */
  submit(texts: string[]): Promise<BatchResult> {
    if (this.local) {
      try {
        return Promise.resolve(this.local.sign(texts));
      } catch (e) {
        return Promise.reject(e);
      }
    }
    if (this.failure) return Promise.reject(this.failure);
    return new Promise((resolve, reject) => {
      this.queue.push({ id: this.nextId++, texts, resolve, reject });
      this.pump();
    });
  }

  private pump(): void {
    if (this.idle.length === 0 && this.queue.length > 0 && this.workers.length < this.threads) this.spawn();
    while (this.idle.length > 0 && this.queue.length > 0) {
      const w = this.idle.pop()!;
      const job = this.queue.shift()!;
      this.running.set(w, job);
      w.ref();
      w.postMessage({ id: job.id, texts: job.texts });
    }
  }

  private done(w: Worker, result: BatchResult): void {
    const job = this.running.get(w);
    this.running.delete(w);
    w.unref();
    this.idle.push(w);
    job?.resolve(result);
    this.pump();
  }

  private fail(e: unknown): void {
    this.failure ??= e;
    for (const job of [...this.running.values(), ...this.queue]) job.reject(this.failure);
    this.running.clear();
    this.queue.length = 0;
  }

  async close(): Promise<void> {
    const ws = this.workers.splice(0);
    for (const w of ws) w.removeAllListeners("exit");
    await Promise.all(ws.map((w) => w.terminate()));
  }
}
