// Runs the overlap analysis beside the build: in a thread of its own when the run may use more
// than one (its hashing and MinHash signing were a third of a build's main-thread time), or in the
// calling thread. Records reach it in output order either way, so the figures are the same.
import { Worker } from "node:worker_threads";
import { compiledModule } from "../parallel/pool.js";
import { SplitOverlap, type OverlapFigures, type OverlapParams } from "../overlap/split-overlap.js";

export interface OverlapMessage {
  add?: { split: string; text: string; tokens: Uint32Array | undefined }[];
  finish?: true;
}

/** Records per message, and messages awaiting acknowledgement before `add` waits (the back-pressure). */
const BATCH = 256;
const IN_FLIGHT = 4;

export class OverlapRunner {
  private readonly local: SplitOverlap | undefined;
  private readonly worker: Worker | undefined;
  private batch: NonNullable<OverlapMessage["add"]> = [];
  private readonly waiting: { resolve(v: unknown): void; reject(e: unknown): void }[] = [];
  private readonly inflight: Promise<unknown>[] = [];
  private failure: Error | undefined;

  constructor(params: OverlapParams, threads: number) {
    const url = threads > 1 ? compiledModule("../analysis/overlap-worker.js", import.meta.url) : undefined;
    if (!url) {
      this.local = new SplitOverlap(params);
      return;
    }
    this.worker = new Worker(url, { workerData: params });
    // Referenced only while an answer is awaited: a build that fails before finish() must still exit.
    this.worker.unref();
    this.worker.on("message", (msg: { ack?: true; figures?: OverlapFigures; error?: string }) => {
      const w = this.waiting.shift();
      if (this.waiting.length === 0) this.worker!.unref();
      if (msg.error) {
        this.failure ??= new Error(`overlap analysis: ${msg.error}`);
        w?.reject(this.failure);
      } else w?.resolve(msg.figures);
    });
    this.worker.on("error", (e) => this.fail(e));
    this.worker.on("exit", (code) => {
      if (code !== 0) this.fail(new Error(`overlap analysis thread exited with code ${code}`));
    });
  }

  private fail(e: Error): void {
    this.failure ??= e;
    for (const w of this.waiting.splice(0)) w.reject(this.failure);
  }

  private send(msg: OverlapMessage): Promise<unknown> {
    if (this.failure) return Promise.reject(this.failure);
    const p = new Promise((resolve, reject) => this.waiting.push({ resolve, reject }));
    this.worker!.ref();
    this.worker!.postMessage(msg);
    return p;
  }

  async add(split: string, text: string, tokens: Uint32Array | undefined): Promise<void> {
    if (this.local) return this.local.add(split, text, tokens);
    this.batch.push({ split, text, tokens });
    if (this.batch.length < BATCH) return;
    this.flush();
    // Wait for the oldest batch only when too many are queued, so the thread keeps working meanwhile.
    if (this.inflight.length > IN_FLIGHT) await this.inflight.shift();
  }

  private flush(): void {
    if (this.batch.length === 0) return;
    const p = this.send({ add: this.batch });
    p.catch(() => {}); // a failure is seen by the next wait, or by finish
    this.inflight.push(p);
    this.batch = [];
  }

  async finish(): Promise<OverlapFigures> {
    if (this.local) return this.local.finish();
    try {
      this.flush();
      await Promise.all(this.inflight.splice(0));
      return (await this.send({ finish: true })) as OverlapFigures;
    } finally {
      await this.close();
    }
  }

  /** Stops the thread (idempotent); a failed build calls it without finish. */
  async close(): Promise<void> {
    if (!this.worker) return;
    this.worker.removeAllListeners("exit");
    await this.worker.terminate();
  }
}
