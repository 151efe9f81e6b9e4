// A local run's task threads: the tasks of one phase side by side, each in a worker thread of its
// own that runs it as `siftpack task` would (src/engine/task-thread.ts). The tasks of a phase are
// independent by design (a cluster runs them on different nodes), so the bytes are those of one
// task after another; what threads add is that every core does a phase's whole work — parsing,
// frames, packing, the ledger, the partition steps — not only the per-record stages.
import { Worker } from "node:worker_threads";
import { SiftpackError, type ErrorCode } from "../errors.js";
import type { Logger } from "../types.js";
import type { LoadedPipeline } from "../pipeline/load.js";
import type { PhaseProgress } from "./progress.js";
import type { TaskDone } from "./workdir.js";
import type { Unit } from "./unit-io.js";

/** What every task thread is started with: enough to rebuild the run's plan. */
export interface TaskThreadInit {
  p: LoadedPipeline;
  units: Unit[];
  tasks: number;
  workDir: string;
  cache: boolean;
}

export interface TaskRequest {
  phase: string;
  index: number;
  /** Threads the task may use for its own per-record pools (1: everything in the task's thread). */
  workers: number;
  /** The bytes it will read, as the run's phaseLayout measured them. */
  bytes: number;
}

export type TaskMessage =
  | { t: "log"; level: keyof Logger; obj: object | string; msg?: string }
  | { t: "progress"; current: PhaseProgress }
  | { t: "done"; done: TaskDone; used: string[] }
  | { t: "error"; error: ErrorData; used: string[] };

interface ErrorData {
  message: string;
  stack?: string;
  code?: ErrorCode;
  details?: string[];
}

/** An error as it can cross to the run's thread: a SiftpackError keeps its code and details (and so its exit code). */
export function errorData(err: unknown): ErrorData {
  const e = err as Partial<SiftpackError> & { message?: string; stack?: string };
  return { message: e?.message ?? String(err), stack: e?.stack, ...(err instanceof SiftpackError ? { code: err.code, details: err.details } : {}) };
}

function errorFrom(d: ErrorData): Error {
  if (d.code) return new SiftpackError(d.code, d.message, { details: d.details });
  return Object.assign(new Error(d.message), { stack: d.stack });
}

interface Job {
  onProgress(current: PhaseProgress): void;
  resolve(r: { done: TaskDone; used: string[] }): void;
  reject(e: unknown): void;
}

export class TaskThreads {
  private readonly workers: Worker[] = [];
  private readonly idle: Worker[] = [];
  private readonly jobs = new Map<Worker, Job>();
  private readonly waiting: (() => void)[] = [];

  constructor(
    private readonly module: URL,
    private readonly init: TaskThreadInit,
    /** Threads at most. */
    readonly size: number,
    private readonly log: Logger,
  ) {}

  /** Runs one task in a free thread (started when none is free and fewer than `size` run); resolves with its marker and the cache entries it used. */
  async run(req: TaskRequest, onProgress: (current: PhaseProgress) => void): Promise<{ done: TaskDone; used: string[] }> {
    const w = await this.take();
    try {
      return await new Promise((resolve, reject) => {
        this.jobs.set(w, { onProgress, resolve, reject });
        w.postMessage(req);
      });
    } finally {
      this.jobs.delete(w);
      if (this.workers.includes(w)) this.idle.push(w);
      this.waiting.shift()?.();
    }
  }

  private async take(): Promise<Worker> {
    for (;;) {
      const w = this.idle.pop();
      if (w) return w;
      if (this.workers.length < this.size) return this.spawn();
      await new Promise<void>((wake) => this.waiting.push(wake));
    }
  }

  private spawn(): Worker {
    const w = new Worker(this.module, { workerData: this.init });
    this.workers.push(w);
    w.on("message", (m: TaskMessage) => {
      const job = this.jobs.get(w);
      if (m.t === "log") this.log[m.level](m.obj, m.msg);
      else if (m.t === "progress") job?.onProgress(m.current);
      else if (m.t === "done") job?.resolve({ done: m.done, used: m.used });
      else job?.reject(Object.assign(errorFrom(m.error), { used: m.used }));
    });
    const lost = (e: Error) => {
      // A thread that died (out of memory, a crash in native code) takes its task with it; it is not reused.
      const at = this.workers.indexOf(w);
      if (at >= 0) this.workers.splice(at, 1);
      this.jobs.get(w)?.reject(e);
    };
    w.on("error", lost);
    w.on("exit", (code) => lost(new Error(`a task thread stopped with exit code ${code}`)));
    return w;
  }

  async close(): Promise<void> {
    const ws = this.workers.splice(0);
    this.idle.length = 0;
    for (const w of ws) w.removeAllListeners("exit");
    await Promise.all(ws.map((w) => w.terminate()));
  }
}
