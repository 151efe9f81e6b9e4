// Build progress on stderr: two redrawn lines and a closing table on a terminal; pino lines anywhere else.
import { readdirSync, readFileSync, readlinkSync, realpathSync } from "node:fs";
import type { RunProgress } from "../engine/run.js";
import type { Logger } from "../types.js";
import type { FateCounts } from "../output/ledger.js";
import { table } from "./summary.js";
import { makeLogger } from "./log.js";

/** Redraws at most this often: five frames a second reads as motion and costs nothing. */
const FRAME_MS = 200;
/** Rates are measured over this trailing window, so they follow a change of pace within seconds. */
const RATE_WINDOW_MS = 5000;
/** Off a terminal, a "progress" log line this often (long builds only: the first comes after one period). */
const LOG_EVERY_MS = 10_000;

export interface Terminal {
  write(s: string): unknown;
  /** Width in characters (undefined when the terminal does not say). */
  columns?: number;
}

export interface ProgressDisplay {
  /** Pass as runPipeline's onProgress. */
  update(p: RunProgress): void;
  /** Stops redrawing and clears the lines; after a successful build, prints the summary table with the final counts. */
  finish(ok: boolean, final?: FateCounts): void;
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

/**
 * Bytes of `file` this process has read so far, or undefined. The readers do not report byte
 * offsets, but the kernel keeps one per open descriptor: on Linux /proc/self/fdinfo shows it for
 * the descriptor a streaming reader reads through. Parquet reads by position, and other systems
 * have no /proc: the bar then moves a whole file at a time.
 */
function offsetIn(file: string): number | undefined {
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

interface Sample {
  t: number;
  bytes: number;
  records: number;
}

/** Progress state and the text drawn from it; separate from the timer so tests can draw frames. */
export class ProgressState {
  readonly started: number;
  last: RunProgress | undefined;
  /** When every input byte had been read (undefined until then). */
  inputDoneAt: number | undefined;
  /** When the count of settled records last changed. */
  recordsAt: number | undefined;
  private samples: Sample[] = [];

  constructor(now: number, private readonly offset: (file: string) => number | undefined = offsetIn) {
    this.started = now;
  }

  /** Input bytes read: finished files, plus the reader's offset in the current one (capped at its size). */
  bytes(p: RunProgress): number {
    if (!p.file || !p.fileSize) return p.bytesDone;
    return p.bytesDone + Math.min(p.fileSize, this.offset(p.file) ?? 0);
  }

  update(p: RunProgress, now: number): void {
    if (p.read !== this.last?.read) this.recordsAt = now;
    this.last = p;
    if (this.inputDoneAt === undefined && p.filesDone === p.filesTotal) this.inputDoneAt = now;
  }

  /** Adds a rate sample; returns [bytes per second, records per second] over the trailing window. */
  rates(now: number, bytes: number): [number, number] {
    const records = this.last?.read ?? 0;
    this.samples.push({ t: now, bytes, records });
    while (this.samples.length > 2 && now - this.samples[1].t >= RATE_WINDOW_MS) this.samples.shift();
    const first = this.samples[0];
    const dt = (now - first.t) / 1000;
    if (dt <= 0) return [0, 0];
    return [(bytes - first.bytes) / dt, (records - first.records) / dt];
  }

  /** The two lines of a frame, each cut to `columns - 1` characters so the terminal never wraps them. */
  frame(now: number, columns: number): string[] {
    const p = this.last;
    if (!p) return [];
    const width = Math.max(20, columns - 1);
    const bytes = this.inputDoneAt !== undefined ? p.bytesTotal : this.bytes(p);
    const [byteRate, recordRate] = this.rates(now, bytes);
    const fraction = p.bytesTotal > 0 ? bytes / p.bytesTotal : p.filesTotal > 0 ? p.filesDone / p.filesTotal : 1;
    let input: string;
    if (this.inputDoneAt !== undefined) {
      input = `${formatBytes(p.bytesTotal)} in ${p.filesTotal} file${p.filesTotal === 1 ? "" : "s"} read in ${formatDuration(this.inputDoneAt - this.started)}`;
    } else {
      const left = byteRate > 0 ? formatDuration((1000 * (p.bytesTotal - bytes)) / byteRate) + " left" : "time left unknown";
      input = `${formatBytes(bytes)} / ${formatBytes(p.bytesTotal)} · file ${Math.min(p.filesDone + 1, p.filesTotal)}/${p.filesTotal} · ${formatBytes(Math.round(byteRate))}/s · ${left}`;
    }
    const pct = `${Math.floor(100 * Math.min(1, fraction))}`.padStart(3) + "%";
    // The bar takes what the text leaves of the line, within bounds.
    const barWidth = Math.max(8, Math.min(40, width - 16 - input.length));
    const n = (x: number) => Math.round(x).toLocaleString("en-US");
    const records =
      `${n(p.read)} done: ${n(p.kept)} kept, ${n(p.dropped)} dropped, ${n(p.quarantined)} quarantined · ${n(recordRate)}/s` +
      (this.inputDoneAt !== undefined ? " · input read, later stages at work" : "");
    const elapsed = formatDuration(now - this.started);
    return [`input   ${bar(fraction, barWidth)} ${pct}  ${input}`, `records ${records} · ${elapsed} so far`].map((l) => cut(l, width));
  }

  /** The closing table: how long reading took and how fast, how many records, and the whole build. */
  summary(now: number): string {
    const p = this.last;
    const total = now - this.started;
    const rows: (string | number)[][] = [["phase", "time", "amount", "rate"]];
    if (p) {
      const inputMs = (this.inputDoneAt ?? now) - this.started;
      rows.push(["read input", formatDuration(inputMs), `${formatBytes(p.bytesTotal)} in ${p.filesTotal} file${p.filesTotal === 1 ? "" : "s"}`, `${formatBytes(Math.round(p.bytesTotal / Math.max(inputMs / 1000, 0.001)))}/s`]);
      const recordsMs = (this.recordsAt ?? now) - this.started;
      rows.push(["records", formatDuration(recordsMs), `${p.read.toLocaleString("en-US")} (${p.kept.toLocaleString("en-US")} kept)`, `${Math.round(p.read / Math.max(recordsMs / 1000, 0.001)).toLocaleString("en-US")}/s`]);
      rows.push(["finish", formatDuration(Math.max(0, now - (this.recordsAt ?? now))), "packing, analysis, manifest", ""]);
    }
    rows.push(["total", formatDuration(total), "", ""]);
    return table(rows);
  }
}

/** Cuts a line to `n` code points (the bar characters are one column each). */
function cut(line: string, n: number): string {
  const chars = [...line];
  return chars.length <= n ? line : chars.slice(0, n - 1).join("") + "…";
}

export interface DisplayOptions {
  /** No bars and no table, whatever stderr is. */
  quiet?: boolean;
  /** Defaults to process.stderr; a terminal gets bars. */
  stream?: Terminal & { isTTY?: boolean };
  level?: string;
}

/**
 * The progress display for `siftpack run`. On a terminal (and not quiet): two lines redrawn at
 * most five times a second (input bytes with a bar, rate and time left; records by fate), erased
 * when the build ends and followed by a table of where the time went. Otherwise nothing but pino
 * JSON lines: a "progress" line every ten seconds of a long build.
 */
export function progressDisplay(o: DisplayOptions = {}): ProgressDisplay {
  const stream = o.stream ?? process.stderr;
  const level = o.level ?? process.env.SIFTPACK_LOG ?? "info";
  const state = new ProgressState(Date.now());
  if (o.quiet || !stream.isTTY) {
    const log = makeLogger(level);
    let lastLog = Date.now();
    let lastSample = 0;
    let rates: [number, number] = [0, 0];
    let bytes = 0;
    return {
      log,
      update(p) {
        const now = Date.now();
        state.update(p, now);
        // A rate sample a second is plenty for a line every ten.
        if (now - lastSample >= 1000) {
          lastSample = now;
          bytes = state.bytes(p);
          rates = state.rates(now, bytes);
        }
        if (now - lastLog < LOG_EVERY_MS) return;
        lastLog = now;
        const { read, kept, dropped, quarantined, filesDone, filesTotal, bytesTotal } = p;
        log.info(
          { progress: { read, kept, dropped, quarantined, filesDone, filesTotal, bytesDone: bytes, bytesTotal, bytesPerSecond: Math.round(rates[0]), recordsPerSecond: Math.round(rates[1]) } },
          "progress",
        );
      },
      finish() {},
    };
  }

  let drawn = 0;
  const clear = () => {
    // Back to the first drawn line, then erase to the end of the screen.
    if (drawn > 0) stream.write(`\r${drawn > 1 ? `\x1b[${drawn - 1}A` : ""}\x1b[J`);
    drawn = 0;
  };
  const draw = () => {
    const lines = state.frame(Date.now(), stream.columns || 80);
    if (lines.length === 0) return;
    clear();
    stream.write(lines.join("\n"));
    drawn = lines.length;
  };
  const timer = setInterval(draw, FRAME_MS);
  timer.unref();
  // Log lines go above the progress lines: erase them, write the line, draw them again.
  const sink = {
    write(s: string) {
      const had = drawn > 0;
      clear();
      stream.write(s);
      if (had) draw();
    },
  };
  return {
    log: makeLogger(level, sink),
    update(p) {
      const first = state.last === undefined;
      state.update(p, Date.now());
      if (first) draw();
    },
    finish(ok, final) {
      clearInterval(timer);
      clear();
      if (!ok) return;
      // The last update may have been held back by the frame limit: the ledger's totals are exact.
      if (final && state.last) state.update({ ...state.last, ...final, bytesDone: state.last.bytesTotal, filesDone: state.last.filesTotal }, state.recordsAt ?? Date.now());
      stream.write(state.summary(Date.now()));
    },
  };
}
