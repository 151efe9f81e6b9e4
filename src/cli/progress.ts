// Build progress on stderr, phase by phase: two redrawn lines and a closing table on a terminal; pino JSON lines anywhere else.
import type { BuildProgress, PhaseProgress, PhaseTiming } from "../engine/progress.js";
import type { Logger } from "../types.js";
import { table } from "./summary.js";
import { makeLogger } from "./log.js";

/** Redraws at most this often: five frames a second reads as motion and costs nothing. */
const FRAME_MS = 200;
/** Rates are measured over this trailing window, so they follow a change of pace within seconds. */
const RATE_WINDOW_MS = 5000;
/** Off a terminal, a "progress" log line this often (long builds only: the first comes after one period). */
const LOG_EVERY_MS = 10_000;
/** The bar's width takes what the text leaves of the line, within these bounds: narrower says little, wider adds nothing. */
const MIN_BAR = 8;
const MAX_BAR = 40;

export interface Terminal {
  write(s: string): unknown;
  /** Width in characters (undefined when the terminal does not say). */
  columns?: number;
}

export interface ProgressDisplay {
  /** Pass as the build's onProgress. */
  update(p: BuildProgress): void;
  /** Stops redrawing and clears the lines; after a successful build, shows how long each phase took. */
  finish(ok: boolean): void;
  /** The logger to give the build: on a terminal its lines are written above the progress lines. */
  readonly log: Logger;
}

export function formatBytes(n: number): string {
  if (n < 1000) return `${n} B`;
  const units = ["kB", "MB", "GB", "TB"];
  let v = n / 1000;
  let u = 0;
  while (v >= 1000 && u < units.length - 1) {
    v /= 1000;
    u++;
  }
  return `${v.toFixed(v < 10 ? 2 : v < 100 ? 1 : 0)} ${units[u]}`;
}

export function formatDuration(ms: number): string {
  if (ms < 60_000) return `${(ms / 1000).toFixed(1)} s`;
  const s = Math.round(ms / 1000);
  const h = Math.floor(s / 3600);
  const m = Math.floor((s % 3600) / 60);
  const pad = (x: number) => String(x).padStart(2, "0");
  return h > 0 ? `${h}:${pad(m)}:${pad(s % 60)}` : `${m}:${pad(s % 60)}`;
}

/** A bar of `width` cells, eighths of a cell drawn with the partial block characters. */
export function bar(fraction: number, width: number): string {
  const f = Math.min(1, Math.max(0, fraction));
  const eighths = Math.round(f * width * 8);
  const full = Math.floor(eighths / 8);
  const part = eighths % 8;
  const partial = part > 0 ? " ▏▎▍▌▋▊▉"[part] : "";
  return "█".repeat(full) + partial + "░".repeat(width - full - (partial ? 1 : 0));
}

const count = (x: number) => Math.round(x).toLocaleString("en-US");

/** Cuts a line to `n` code points (the bar characters are one column each). */
function cut(line: string, n: number): string {
  const chars = [...line];
  return chars.length <= n ? line : chars.slice(0, Math.max(0, n - 1)).join("") + "…";
}

interface Sample {
  t: number;
  bytes: number;
  records: number;
}

/** What the display says about the phase at work, measured at one moment; frames and log lines are drawn from it. */
export interface PhaseFigures extends Omit<PhaseProgress, "index"> {
  /** 1-based, as people count phases. */
  number: number;
  /** Over the trailing window; undefined until two moments of the phase are far enough apart to tell. */
  bytesPerSecond: number | undefined;
  recordsPerSecond: number | undefined;
  /** Undefined when there is no byte rate yet, or the phase has read all it will read and is finishing. */
  secondsLeft: number | undefined;
  /** Share of the phase done, 0..1. */
  fraction: number;
  /** Milliseconds since the phase began (its final time once it is finished). */
  phaseMs: number;
  /** Set once the phase is over: the build sent its timing, or all its tasks are done. */
  finished: boolean;
}

/** Progress state and the text drawn from it; separate from the timers so tests can draw frames at chosen moments. */
export class ProgressState {
  readonly started: number;
  last: BuildProgress | undefined;
  private phaseKey: string | undefined;
  private phaseStarted = 0;
  /** When the last report came. */
  private lastAt = 0;
  /** This phase's samples, oldest first; the first is the rate's baseline (see update). */
  private samples: Sample[] = [];

  constructor(now: number) {
    this.started = now;
  }

  update(p: BuildProgress, now: number): void {
    const c = p.current;
    // Rates and the phase's clock start again with every phase: one phase's pace says nothing of the next's.
    const key = `${c.index}:${c.phase}`;
    if (key !== this.phaseKey) {
      this.phaseKey = key;
      this.phaseStarted = now;
      this.samples = [];
    }
    this.last = p;
    this.lastAt = now;
    this.samples.push({ t: now, bytes: c.bytesDone, records: c.records });
    // Keep one sample at or before the window's start, so the rate always spans the whole window.
    while (this.samples.length > 2 && this.samples[1].t <= now - RATE_WINDOW_MS) this.samples.shift();
  }

  figures(now: number): PhaseFigures | undefined {
    const p = this.last;
    if (!p) return undefined;
    const c = p.current;
    const timing = this.timing();
    const base = this.samples.filter((s) => s.t <= now - RATE_WINDOW_MS).at(-1) ?? this.samples[0];
    // The rate runs to `now`, not to the last report: a phase that stalls shows its rate falling.
    const dt = (now - base.t) / 1000;
    const moving = !timing && dt > 0;
    const bytesPerSecond = moving && c.bytesTotal > 0 ? (c.bytesDone - base.bytes) / dt : undefined;
    const recordsPerSecond = moving ? (c.records - base.records) / dt : undefined;
    const bytesLeft = c.bytesTotal - c.bytesDone;
    const secondsLeft = bytesPerSecond && bytesPerSecond > 0 && bytesLeft > 0 ? bytesLeft / bytesPerSecond : undefined;
    // A finished phase is whole even when its byte count fell short of the estimate made before it began.
    const fraction = timing ? 1 : c.bytesTotal > 0 ? Math.min(1, c.bytesDone / c.bytesTotal) : c.tasks > 0 ? c.tasksDone / c.tasks : 0;
    return {
      phase: c.phase,
      number: c.index + 1,
      phases: c.phases,
      tasksDone: c.tasksDone,
      tasks: c.tasks,
      bytesDone: c.bytesDone,
      bytesTotal: c.bytesTotal,
      records: c.records,
      bytesPerSecond,
      recordsPerSecond,
      secondsLeft,
      fraction,
      phaseMs: timing ? timing.seconds * 1000 : now - this.phaseStarted,
      finished: timing !== undefined,
    };
  }

  /**
   * The current phase's timing once it is over: the build's, or, when every task is done but no timing
   * came (a lone task process measures only its own task), one from the reports this display received.
   */
  private timing(): PhaseTiming | undefined {
    const p = this.last;
    if (!p) return undefined;
    const c = p.current;
    // Phase names are unique within a plan.
    const given = p.finished.find((f) => f.phase === c.phase);
    if (given || c.tasks === 0 || c.tasksDone < c.tasks) return given;
    return { phase: c.phase, tasks: c.tasks, seconds: (this.lastAt - this.phaseStarted) / 1000, bytes: c.bytesDone, records: c.records };
  }

  /** Every phase over so far, in order, with its timing (for the closing table and the "phases" log line). */
  phasesDone(): PhaseTiming[] {
    const done = [...(this.last?.finished ?? [])];
    const current = this.timing();
    if (current && !done.includes(current)) done.push(current);
    return done;
  }

  /** The two lines of a frame, each cut to `columns - 1` characters so the terminal never wraps them. */
  frame(now: number, columns: number): string[] {
    const f = this.figures(now);
    if (!f) return [];
    const width = Math.max(1, columns - 1);
    const head = `phase ${f.number}/${f.phases} ${f.phase}  tasks ${f.tasksDone}/${f.tasks}`;
    const pct = `${Math.floor(100 * f.fraction)}`.padStart(3) + "%";
    const amount = f.bytesTotal > 0 ? `${formatBytes(f.bytesDone)} / ${formatBytes(f.bytesTotal)}` : undefined;
    const rate = f.bytesPerSecond !== undefined ? `${formatBytes(Math.round(f.bytesPerSecond))}/s` : undefined;
    let left: string;
    if (f.finished) left = `done in ${formatDuration(f.phaseMs)}`;
    else if (f.secondsLeft !== undefined) left = `${formatDuration(1000 * f.secondsLeft)} left`;
    // All read but not yet finished: the phase is writing or sorting, and no byte rate can say for how long.
    else if (f.bytesTotal > 0 && f.bytesDone >= f.bytesTotal) left = "all read, finishing";
    else left = "time left unknown";
    // On a narrow terminal the byte rate goes first (the time left already says what it would tell), then the
    // byte counts (the bar shows the share). What still does not fit is cut at the end.
    const tails = [[amount, rate, left], [amount, left], [left]].map((t) => t.filter((x) => x !== undefined).join(" · "));
    const fixed = (tail: string) => head.length + 2 + 1 + pct.length + 2 + tail.length;
    const tail = tails.find((t) => width - fixed(t) >= MIN_BAR) ?? tails[tails.length - 1];
    const barWidth = Math.max(MIN_BAR, Math.min(MAX_BAR, width - fixed(tail)));
    const line1 = `${head}  ${bar(f.fraction, barWidth)} ${pct}  ${tail}`;
    const perSecond = f.recordsPerSecond !== undefined ? ` · ${count(f.recordsPerSecond)}/s` : "";
    const line2 = `records ${count(f.records)}${perSecond} · ${formatDuration(f.phaseMs)} in this phase · ${formatDuration(now - this.started)} in all`;
    return [line1, line2].map((l) => cut(l, width));
  }

  /** The closing table: every finished phase with its tasks, time, bytes, records and rate, then the whole build. */
  summary(now: number): string {
    const done = this.phasesDone();
    const rows: (string | number)[][] = [["phase", "tasks", "time", "bytes", "records", "rate"]];
    for (const t of done) rows.push([t.phase, t.tasks, formatDuration(1000 * t.seconds), formatBytes(t.bytes), count(t.records), phaseRate(t)]);
    // The total's time is the command's wall clock (loading and the gaps between phases included). Bytes and
    // records are not summed: each phase reads what the one before wrote, so a sum would count data again and again.
    rows.push(["total", done.reduce((a, t) => a + t.tasks, 0), formatDuration(now - this.started), "", "", ""]);
    // Figures read best right-aligned, under headings aligned the same way; `table` pads strings on the right, so
    // pad them here first.
    for (let col = 2; col < rows[0].length; col++) {
      const w = Math.max(...rows.map((r) => String(r[col]).length));
      for (const r of rows) r[col] = String(r[col]).padStart(w);
    }
    return table(rows);
  }
}

/** A finished phase's pace: bytes per second when it measured bytes, else records per second. */
function phaseRate(t: PhaseTiming): string {
  const s = Math.max(t.seconds, 0.001);
  if (t.bytes > 0) return `${formatBytes(Math.round(t.bytes / s))}/s`;
  if (t.records > 0) return `${count(t.records / s)} records/s`;
  return "";
}

/** The "progress" log line's figures, in the log's snake_case; unknowns are null so every line has every key. */
function progressLine(f: PhaseFigures): Record<string, string | number | null> {
  const round = (x: number | undefined) => (x === undefined ? null : Math.round(x));
  return {
    phase: f.phase,
    phase_number: f.number,
    phases: f.phases,
    tasks_done: f.tasksDone,
    tasks: f.tasks,
    bytes_done: f.bytesDone,
    bytes_total: f.bytesTotal,
    records: f.records,
    bytes_per_second: round(f.bytesPerSecond),
    records_per_second: round(f.recordsPerSecond),
    seconds_left: f.secondsLeft === undefined ? null : Math.round(10 * f.secondsLeft) / 10,
  };
}

export interface DisplayOptions {
  /** Warnings and errors only: no progress, no table, log level "warn" unless SIFTPACK_LOG says otherwise. */
  quiet?: boolean;
  /** Defaults to process.stderr; a terminal gets the redrawn lines. */
  stream?: Terminal & { isTTY?: boolean };
  /** The log level; defaults to SIFTPACK_LOG, else "info" ("warn" when quiet). */
  level?: string;
  /** Defaults to process.env (SIFTPACK_LOG, SIFTPACK_PROGRESS_EVERY_MS). */
  env?: NodeJS.ProcessEnv;
}

/**
 * How often to write a "progress" line off a terminal. SIFTPACK_PROGRESS_EVERY_MS overrides the ten
 * seconds, so that a test can see a line during a build that takes a second; anything but a positive
 * whole number is ignored.
 */
function logEvery(env: NodeJS.ProcessEnv): number {
  const v = env.SIFTPACK_PROGRESS_EVERY_MS;
  return v && /^[1-9]\d*$/.test(v) ? Number(v) : LOG_EVERY_MS;
}

/**
 * The progress display of `siftpack run` and `siftpack task`. On a terminal (and not quiet): two
 * lines about the phase at work, redrawn at most five times a second, erased when the build ends
 * and followed by a table of the phases. Otherwise nothing but pino JSON lines: a "progress" line
 * every ten seconds, and a "phases" line at the end of a successful build.
 */
export function progressDisplay(o: DisplayOptions = {}): ProgressDisplay {
  const env = o.env ?? process.env;
  const stream = o.stream ?? process.stderr;
  // An empty SIFTPACK_LOG counts as unset: it is what `SIFTPACK_LOG= siftpack …` gives.
  const level = o.level ?? (env.SIFTPACK_LOG || (o.quiet ? "warn" : "info"));
  // A stream given by the caller gets the log lines too; stderr is written through pino's own synchronous destination.
  const sink = o.stream ? { write: (s: string) => void o.stream!.write(s) } : undefined;
  const state = new ProgressState(Date.now());
  let ended = false;

  if (o.quiet) return { log: makeLogger(level, sink), update() {}, finish() {} };

  if (!stream.isTTY) {
    const log = makeLogger(level, sink);
    const every = logEvery(env);
    let lastLog = state.started;
    const maybeLog = (now: number) => {
      if (ended || now - lastLog < every) return;
      const f = state.figures(now);
      if (!f) return;
      lastLog = now;
      log.info({ progress: progressLine(f) }, "progress");
    };
    // The timer writes a line even while the build reports nothing (a stalled phase shows its rate falling);
    // update() writes one when a busy event loop held the timer back.
    const timer = setInterval(() => maybeLog(Date.now()), every);
    timer.unref();
    return {
      log,
      update(p) {
        if (ended) return;
        const now = Date.now();
        state.update(p, now);
        maybeLog(now);
      },
      finish(ok) {
        if (ended) return;
        ended = true;
        clearInterval(timer);
        if (!ok || !state.last) return;
        const phases = state.phasesDone().map(({ phase, tasks, seconds, bytes, records }) => ({ phase, tasks, seconds: Math.round(1000 * seconds) / 1000, bytes, records }));
        log.info({ phases, seconds: (Date.now() - state.started) / 1000 }, "phases");
      },
    };
  }

  let drawn = 0;
  let lastDraw = -Infinity;
  const clear = () => {
    // Back to the first drawn line, then erase to the end of the screen.
    if (drawn > 0) stream.write(`\r${drawn > 1 ? `\x1b[${drawn - 1}A` : ""}\x1b[J`);
    drawn = 0;
  };
  const draw = () => {
    const now = Date.now();
    const lines = state.frame(now, stream.columns || 80);
    if (lines.length === 0) return;
    clear();
    stream.write(lines.join("\n"));
    drawn = lines.length;
    lastDraw = now;
  };
  // Both the timer and the build's reports may draw, whichever comes first once a frame is due: the timer keeps
  // the clock moving while the build is quiet, the reports keep frames coming while the build holds the event loop.
  const maybeDraw = () => {
    if (!ended && Date.now() - lastDraw >= FRAME_MS) draw();
  };
  const timer = setInterval(maybeDraw, FRAME_MS);
  timer.unref();
  // Log lines go above the progress lines: erase them, write the line, draw them again.
  const above = {
    write(s: string) {
      const had = drawn > 0;
      clear();
      stream.write(s);
      if (had) draw();
    },
  };
  return {
    log: makeLogger(level, above),
    update(p) {
      if (ended) return;
      state.update(p, Date.now());
      maybeDraw();
    },
    finish(ok) {
      if (ended) return;
      ended = true;
      clearInterval(timer);
      clear();
      if (ok && state.last) stream.write(state.summary(Date.now()));
    },
  };
}
