// A pool of worker threads running one handler on batches, or the same handler in the calling
// thread; callers consume results in submission order, so the outcome never depends on timing.
import { Worker } from "node:worker_threads";
import { existsSync } from "node:fs";
import { fileURLToPath } from "node:url";

interface Job<Req, Res> {
  req: Req;
  resolve(r: Res): void;
  reject(e: unknown): void;
}

/**
 * The compiled worker module `name` beside this file, or undefined when it cannot run: a test
 * runner executing the .ts sources has no .js beside them, and the pool then works in-thread.
 */
export function compiledModule(name: string, base: string = import.meta.url): URL | undefined {
  if (!base.endsWith(".js")) return undefined;
  const url = new URL(name, base);
  return existsSync(fileURLToPath(url)) ? url : undefined;
}

export type Handler<Req, Res> = (req: Req) => Promise<Res>;

export interface PoolOptions<Req, Res> {
  /** Worker module (compiled); undefined runs `local` in this thread. */
  module: URL | undefined;
  /** Passed to the worker as workerData. */
  init: unknown;
  /** Worker threads; 1 or fewer runs `local` in this thread. */
  threads: number;
  /** The same handler, for in-thread use. */
  local: () => Promise<Handler<Req, Res>>;
  /** Names the workers in errors ("dedup signing worker"). */
  name?: string;
  /** Buffers of a request to move to the worker instead of copying (the caller lets go of them). */
  transfer?: (req: Req) => ArrayBuffer[];
}

/**
 * Worker protocol: the pool posts a request; the worker answers `{ result }` (moving its typed
 * arrays) or `{ error: { message, where? } }`. Workers start only when a request is waiting for
 * one, so a small input never starts threads it does not need, and an idle worker is unref'd so it
 * never keeps the process alive on its own.
 */
export class WorkerPool<Req, Res> {
  readonly threads: number;
  private localHandler: Promise<Handler<Req, Res>> | undefined;
  private readonly url: URL | undefined;
  private readonly init: unknown;
  private readonly name: string;
  private readonly transfer: ((req: Req) => ArrayBuffer[]) | undefined;
  private readonly workers: Worker[] = [];
  private readonly idle: Worker[] = [];
  private readonly queue: Job<Req, Res>[] = [];
  private readonly running = new Map<Worker, Job<Req, Res>>();
  private failure: unknown;

  constructor(o: PoolOptions<Req, Res>) {
    this.url = o.threads > 1 ? o.module : undefined;
    this.threads = this.url ? o.threads : 1;
    this.init = o.init;
    this.name = o.name ?? "worker thread";
    this.transfer = o.transfer;
    if (!this.url) this.localHandler = o.local();
  }

  private spawn(): void {
    const w = new Worker(this.url!, { workerData: this.init });
    w.unref();
    w.on("message", (msg: { result?: Res; error?: { message: string; where?: unknown } }) => this.done(w, msg));
    w.on("error", (e) => this.fail(e));
    w.on("exit", (code) => {
      if (code !== 0) this.fail(new Error(`${this.name} exited with code ${code}`));
    });
    this.workers.push(w);
    this.idle.push(w);
  }

  submit(req: Req): Promise<Res> {
    if (this.localHandler) return this.localHandler.then((h) => h(req));
    if (this.failure) return Promise.reject(this.failure);
    return new Promise((resolve, reject) => {
      this.queue.push({ req, resolve, reject });
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
      w.postMessage(job.req, this.transfer?.(job.req));
    }
  }

  private done(w: Worker, msg: { result?: Res; error?: { message: string; where?: unknown } }): void {
    const job = this.running.get(w);
    this.running.delete(w);
    w.unref();
    this.idle.push(w);
    if (msg.error) job?.reject(Object.assign(new Error(msg.error.message), { where: msg.error.where }));
    else job?.resolve(msg.result as Res);
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
    for (const w of ws) {
      w.removeAllListeners("exit");
      // An idle worker is unref'd; awaiting its end with nothing else keeping the event loop alive
      // would let the process exit mid-await (exit code 13, seen when a stage failed in a worker).
      w.ref();
    }
    await Promise.all(ws.map((w) => w.terminate()));
  }
}

/**
 * Submits each input to the pool as it arrives, keeping at most `ahead` in flight, and yields the
 * results in input order; the in-flight bound is the back-pressure on reading.
 */
export async function* orderedMap<T, R>(input: AsyncIterable<T>, submit: (t: T) => Promise<R>, ahead: number): AsyncGenerator<{ item: T; result: R }> {
  const inflight: { item: T; p: Promise<R> }[] = [];
  const start = (item: T) => {
    const p = submit(item);
    p.catch(() => {}); // rejection is observed when its turn comes
    inflight.push({ item, p });
  };
  for await (const item of input) {
    start(item);
    if (inflight.length >= ahead) {
      const x = inflight.shift()!;
      yield { item: x.item, result: await x.p };
    }
  }
  while (inflight.length > 0) {
    const x = inflight.shift()!;
    yield { item: x.item, result: await x.p };
  }
}
