// What a build reports while it runs: the phase at work, its tasks, the bytes and records it has
// handled, and the phases already finished. The engine measures; src/cli/progress.ts draws.
import { readdirSync, readFileSync, readlinkSync, realpathSync } from "node:fs";

export interface PhaseProgress {
  /** The phase's name (read, pass-2, exact-dups, …) and its place in the plan (0-based) of `phases`. */
  phase: string;
  index: number;
  phases: number;
  /** Tasks of this phase finished, and its tasks in all (a local run runs one task per phase). */
  tasksDone: number;
  tasks: number;
  /** Bytes this phase has read and will read: input files in `read`, the files of the phase before in later phases. */
  bytesDone: number;
  bytesTotal: number;
  /** Records (or keyed items, in a partition phase) handled so far. */
  records: number;
}

/** A finished phase, for the closing table. */
export interface PhaseTiming {
  phase: string;
  tasks: number;
  seconds: number;
  bytes: number;
  records: number;
}

export interface BuildProgress {
  current: PhaseProgress;
  /** Phases finished so far, in order. */
  finished: PhaseTiming[];
}

export type ProgressListener = (p: BuildProgress) => void;

/**
 * Bytes of `file` this process has read so far, or undefined. The readers do not report byte
 * offsets, but the kernel keeps one per open descriptor: on Linux /proc/self/fdinfo shows it for
 * the descriptor a streaming reader reads through. Parquet reads by position, and other systems
 * have no /proc: progress then moves a whole file at a time.
 */
export function offsetIn(file: string): number | undefined {
  let real: string;
  try {
    real = realpathSync(file);
  } catch {
    return undefined;
  }
  let fds: string[];
  try {
    fds = readdirSync("/proc/self/fd");
  } catch {
    return undefined;
  }
  let best: number | undefined;
  for (const fd of fds) {
    try {
      if (readlinkSync(`/proc/self/fd/${fd}`) !== real) continue;
      const m = /^pos:\s+(\d+)/m.exec(readFileSync(`/proc/self/fdinfo/${fd}`, "utf8"));
      if (m) best = Math.max(best ?? 0, Number(m[1]));
    } catch {
      // The descriptor closed while we looked.
    }
  }
  return best;
}

/** Reports at most this often (and at every task's and phase's end). */
const REPORT_MS = 200;

/**
 * The meter one phase's tasks report to. `bytes`/`records` add what was handled; `reading` names
 * a file being streamed (its descriptor's offset counts until `bytes` takes the whole file).
 */
/** Reports a phase's progress to a listener: at most every REPORT_MS, or when forced. */
abstract class Reporting {
  private last = 0;

  constructor(
    protected readonly finished: PhaseTiming[],
    private readonly listener: ProgressListener | undefined,
  ) {}

  protected abstract current(): PhaseProgress;

  protected report(force: boolean): void {
    if (!this.listener) return;
    const now = Date.now();
    if (!force && now - this.last < REPORT_MS) return;
    this.last = now;
    this.listener({ current: this.current(), finished: [...this.finished] });
  }
}

export class PhaseMeter extends Reporting {
  private bytesDone = 0;
  private recordsDone = 0;
  private tasksDone = 0;
  private file: { path: string; start: number; size: number } | undefined;
  private readonly started = Date.now();

  constructor(
    private readonly info: { phase: string; index: number; phases: number; tasks: number; bytesTotal: number },
    finished: PhaseTiming[],
    listener: ProgressListener | undefined,
    private readonly offset: (file: string) => number | undefined = offsetIn,
  ) {
    super(finished, listener);
    this.report(true);
  }

  /** A file this phase streams from byte `start` for `size` bytes; progress inside it is read from the kernel. */
  reading(path: string, start: number, size: number): void {
    this.file = { path, start, size };
  }

  bytes(n: number): void {
    this.bytesDone += n;
    this.file = undefined;
    this.report(false);
  }

  records(n = 1): void {
    this.recordsDone += n;
    this.report(false);
  }

  taskDone(): void {
    this.tasksDone++;
    this.report(true);
  }

  /** The phase has ended: its line in the closing table. */
  finish(): PhaseTiming {
    const t: PhaseTiming = { phase: this.info.phase, tasks: this.info.tasks, seconds: (Date.now() - this.started) / 1000, bytes: this.bytesDone, records: this.recordsDone };
    this.finished.push(t);
    this.report(true);
    return t;
  }

  protected current(): PhaseProgress {
    let inFile = 0;
    if (this.file) {
      const at = this.offset(this.file.path);
      if (at !== undefined) inFile = Math.min(this.file.size, Math.max(0, at - this.file.start));
    }
    const { phase, index, phases, tasks, bytesTotal } = this.info;
    return { phase, index, phases, tasks, tasksDone: this.tasksDone, bytesTotal, bytesDone: Math.min(bytesTotal, this.bytesDone + inFile), records: this.recordsDone };
  }

}

/**
 * A phase as a local run sees it: its tasks report their own progress (each its own PhaseMeter,
 * in this thread or a task thread), summed here; the phase's line in the closing table once all
 * are done.
 */
export class PhaseTally extends Reporting {
  private readonly byTask = new Map<number, PhaseProgress>();
  private tasksDone = 0;
  private readonly started = Date.now();

  constructor(
    private readonly info: { phase: string; index: number; phases: number; tasks: number; bytesTotal: number },
    finished: PhaseTiming[],
    listener: ProgressListener | undefined,
  ) {
    super(finished, listener);
    this.report(true);
  }

  /** Task `i`'s latest progress. */
  task(i: number, current: PhaseProgress): void {
    this.byTask.set(i, current);
    this.report(false);
  }

  taskDone(): void {
    this.tasksDone++;
    this.report(true);
  }

  finish(): PhaseTiming {
    const { bytes, records } = this.sums();
    const t: PhaseTiming = { phase: this.info.phase, tasks: this.info.tasks, seconds: (Date.now() - this.started) / 1000, bytes, records };
    this.finished.push(t);
    this.report(true);
    return t;
  }

  private sums(): { bytes: number; records: number } {
    let bytes = 0;
    let records = 0;
    for (const c of this.byTask.values()) {
      bytes += c.bytesDone;
      records += c.records;
    }
    return { bytes, records };
  }

  protected current(): PhaseProgress {
    const { bytes, records } = this.sums();
    const { phase, index, phases, tasks, bytesTotal } = this.info;
    return { phase, index, phases, tasks, tasksDone: this.tasksDone, bytesTotal, bytesDone: Math.min(bytesTotal, bytes), records };
  }

}
