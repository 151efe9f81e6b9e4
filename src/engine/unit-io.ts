// What every task needs: the units of work in build order, the plan's key, numbering fixed across
// the parts of a file, and reading / writing one unit's records between phases.
import { open, stat } from "node:fs/promises";
import { compressionOf } from "../sources/open.js";
import { join } from "node:path";
import { defaultId, idFileOf, listFiles } from "../sources/source.js";
import type { LoadedPipeline } from "../pipeline/load.js";
import type { SourceConfig } from "../pipeline/config.js";
import { toolVersion } from "../output/manifest.js";
import { BuildCache } from "../cache/build-cache.js";
import { FrameWriter, readEvents, type UnitEvent } from "../cache/record-events.js";
import { KeyedDirs, keyedApplier } from "../stages/keyed.js";
import type { PhaseMeter } from "./progress.js";
import { SiftpackError, describeSystemError } from "../errors.js";
import { copiesFor } from "./weights.js";
import type { DocRecord, Logger, StageContext } from "../types.js";
import type { Phase, PhasePlan } from "./plan.js";
import { AtomicStream, unitName, type TaskDone } from "./workdir.js";
import { crashPoint } from "../lib/crash-point.js";

export interface Unit {
  u: number;
  source: SourceConfig;
  path: string;
  /** The whole file's size. */
  size: number;
  /** Set when the unit is a part of a large uncompressed JSONL file: bytes [start, end), cut after a newline. */
  range?: { start: number; end: number };
}

/** The bytes of its file a unit covers. */
export const unitBytes = (u: Unit) => (u.range ? u.range.end - u.range.start : u.size);

/**
 * Every unit of work in build order: sources in pipeline order, each source's files sorted by path,
 * and an uncompressed JSONL file larger than `cluster.unit_mb` cut into parts of about that size,
 * each ending after a newline. The cuts depend on the file and unit_mb only, never on the tasks.
 */
export async function unitsOf(p: LoadedPipeline): Promise<Unit[]> {
  const units: Unit[] = [];
  const unitBytes = Math.max(1, Math.round(p.config.cluster.unit_mb * 1e6));
  for (const source of p.config.sources) {
    for (const path of await listFiles(source, p.baseDir)) {
      const abs = join(p.baseDir, path);
      const { size } = await stat(abs).catch((err) => {
        throw new SiftpackError("SP_INPUT_MISSING", `source "${source.name}": cannot read ${path}: ${describeSystemError(err)}`, { cause: err });
      });
      if (source.format !== "jsonl" || compressionOf(path) !== "none" || size <= unitBytes) {
        units.push({ u: units.length, source, path, size });
        continue;
      }
      let start = 0;
      for (const end of await lineCuts(abs, size, unitBytes)) {
        units.push({ u: units.length, source, path, size, range: { start, end } });
        start = end;
      }
    }
  }
  return units;
}

/** Where the parts of a file end: just after the first newline at or past every multiple of `unitBytes`, and at the end. */
async function lineCuts(path: string, size: number, unitBytes: number): Promise<number[]> {
  const cuts: number[] = [];
  const fh = await open(path, "r");
  try {
    const buf = Buffer.allocUnsafe(1 << 16);
    let at = unitBytes;
    while (at < size) {
      let cut = size;
      for (let pos = at; pos < size; pos += buf.length) {
        const { bytesRead } = await fh.read(buf, 0, buf.length, pos);
        const nl = buf.subarray(0, bytesRead).indexOf(10);
        if (nl >= 0) {
          cut = pos + nl + 1;
          break;
        }
        if (bytesRead === 0) break;
      }
      if (cut >= size) break;
      cuts.push(cut);
      at = Math.max(cut, at + unitBytes);
    }
  } finally {
    await fh.close();
  }
  cuts.push(size);
  return cuts;
}

/** Names one plan: the pipeline, the inputs as listed (path and size), the tool and the task counts. */
export function planKey(p: LoadedPipeline, units: Unit[], plan: PhasePlan): string {
  return BuildCache.key({ siftpack: toolVersion(), pipeline: p.hash, units: units.map((u) => [u.source.name, u.path, u.size, u.range?.start ?? null]), phases: plan.phases.map((ph) => [ph.name, ph.tasks]) });
}

/** Everything a task knows about the build: its plan, the inputs, and the markers of the phases before it. */
export interface TaskEnv {
  p: LoadedPipeline;
  plan: PhasePlan;
  key: string;
  units: Unit[];
  phase: Phase;
  index: number;
  /** Markers of every earlier phase, by phase name. */
  done: Map<string, TaskDone[]>;
  log: Logger;
  threads: number;
  meter: PhaseMeter;
}

/**
 * Where the read phase's numbering of a unit is fixed, once, as its records leave the read phase:
 * a part of a file numbers rows (`seq`) from 0 and lines from 1, so the rows and lines of the file's
 * earlier parts are added, and default ids (file and line) are made from the file-wide line.
 */
export interface UnitFix {
  /** Rows and physical lines of the file's earlier parts. */
  rows: number;
  lines: number;
  /** The file as default ids name it (idFileOf). */
  idFile: string;
}

const fixes = new WeakMap<TaskEnv, UnitFix[]>();

export function unitFixes(env: TaskEnv): UnitFix[] {
  let f = fixes.get(env);
  if (!f) fixes.set(env, (f = makeFixes(env)));
  return f;
}

function makeFixes(env: TaskEnv): UnitFix[] {
  const facts = new Map<number, TaskDone["units"][string]>();
  for (const d of env.done.get("read") ?? []) for (const [u, f] of Object.entries(d.units)) facts.set(Number(u), f);
  const out: UnitFix[] = [];
  for (const unit of env.units) {
    const later = unit.range !== undefined && unit.range.start > 0 && unit.u > 0;
    const prev = out[unit.u - 1];
    const before = facts.get(unit.u - 1);
    out.push({ rows: later ? prev.rows + (before?.rows ?? 0) : 0, lines: later ? prev.lines + (before?.lines ?? 0) : 0, idFile: idFileOf(unit.source, env.p.baseDir, unit.path) });
  }
  return out;
}

/** Fixes a record (or a drop) read from the read phase's file of unit u: its row, line and default id. */
export function fixFromRead(env: TaskEnv, u: number, r: { id: string; seq: number; origin: { line: number } }): void {
  const f = unitFixes(env)[u];
  const source = env.units[u].source;
  r.seq += f.rows;
  r.origin.line += f.lines;
  // Named after the file-wide line: the same id for any unit_mb, task count or worker count.
  if (source.id === undefined) r.id = defaultId(source, f.idFile, r.origin.line);
}

/** A unit's records (and, after read, its drops and bad rows) as a phase left them, in record frames. */
export const unitsFile = (work: string, phase: string, u: number) => join(work, phase, "units", `${unitName(u)}.bin`);
/** The drops a later phase made, in record frames. */
export const dropsFile = (work: string, phase: string, u: number) => join(work, phase, "drops", `${unitName(u)}.bin`);
/** Per unit: the summaries of a pass's stages of form `unit`, a JSON array by entry. */
export const summaryFile = (work: string, phase: string, u: number) => join(work, phase, "summaries", `${unitName(u)}.json`);

const materializes = (ph: Phase) => ph.does.kind === "read" || ph.does.kind === "pass" || ph.does.kind === "whole";

/** The phase whose unit files hold the records as they stand before phase `k`, and the keyed stages whose decisions came since. */
export function sourceOf(plan: PhasePlan, k: number): { from: Phase; keyed: number[] } {
  let m = k - 1;
  while (!materializes(plan.phases[m])) m--;
  const keyed: number[] = [];
  // The explicit-id check (index -1) is applied by the pack phase itself.
  for (const ph of plan.phases.slice(m + 1, k)) if (ph.does.kind === "partition" && ph.does.keyed >= 0) keyed.push(ph.does.keyed);
  return { from: plan.phases[m], keyed };
}

/** The files of keyed stage `k` (its index in the pipeline's stages). */
export function keyedDirs(env: TaskEnv, k: number): KeyedDirs {
  const steps = env.plan.keyed.get(k)!;
  const work = env.plan.workDir;
  return new KeyedDirs(join(work, steps.collect), join(work, steps.partition), steps.resolve ? join(work, steps.resolve) : undefined, env.units.length, env.plan.tasks);
}

/** What a keyed step may use: the seed, the pipeline's directory, counters and the log. */
export function stepContext(env: TaskEnv, count: StageContext["count"]) {
  return { seed: env.p.config.seed, baseDir: env.p.baseDir, log: env.log, count };
}

type UnitApplier = (r: DocRecord, ctx: StageContext) => DocRecord | undefined;
const appliers = new WeakMap<TaskEnv, Map<number, Promise<(u: number) => Promise<UnitApplier>>>>();

/** Prepared once per task: every unit's reader applies the same shared results. */
function applierOf(env: TaskEnv, k: number, count: StageContext["count"]): Promise<(u: number) => Promise<UnitApplier>> {
  let m = appliers.get(env);
  if (!m) appliers.set(env, (m = new Map()));
  let a = m.get(k);
  if (!a) {
    const steps = env.plan.keyed.get(k)!;
    m.set(k, (a = keyedApplier(steps.form, steps.entry.options, keyedDirs(env, k), stepContext(env, count))));
  }
  return a;
}

/**
 * The records of unit `u` as they reach phase `k`: numbering fixed (after the read phase), mixture
 * weights of 0 applied (they need the final id), then the decisions of the keyed steps since the
 * last unit files, in pipeline order; drops are reported through `ctx.drop`. `text: false`: the
 * caller does not read the records' text, which is then left out where nothing else needs it;
 * `text: "utf8"`: the caller reads only its UTF-8 bytes (DocRecord.utf8), likewise.
 */
export async function* recordsBefore(env: TaskEnv, k: number, u: number, ctx: StageContext, o: { text?: boolean | "utf8" } = {}): AsyncGenerator<DocRecord> {
  const { from, keyed } = sourceOf(env.plan, k);
  const apply: UnitApplier[] = [];
  for (const s of keyed) apply.push(await (await applierOf(env, s, ctx.count))(u));
  const weight = env.units[u].source.weight;
  const path = unitsFile(env.plan.workDir, from.name, u);
  env.meter.reading(path, 0, await fileSize(path));
  // Text left undecoded only when no keyed step's decision is applied here (an applier may read or edit it).
  next: for await (const e of readEvents(path, { text: keyed.length > 0 ? true : (o.text ?? true) })) {
    if (e.k !== "rec") continue;
    let r: DocRecord | undefined = e.r;
    if (from.does.kind === "read") {
      fixFromRead(env, u, r);
      if (weight !== 1 && copiesFor(weight, `${r.source}\u0000${r.id}`, env.p.config.seed) === 0) {
        ctx.drop(r, "subsampled", { weight });
        continue;
      }
    }
    for (const a of apply) {
      r = a(r!, ctx);
      if (!r) continue next;
    }
    env.meter.records();
    yield r!;
  }
  env.meter.bytes(await fileSize(path));
}

async function fileSize(path: string): Promise<number> {
  return (await stat(path).catch(() => ({ size: 0 }))).size;
}

/** One unit's output of a phase: its records and the drops the phase made, each file complete or absent. */
export class UnitOutput {
  records = 0;
  private readonly frames = new FrameWriter(1 << 20);
  private readonly dropFrames = new FrameWriter();
  private constructor(
    private readonly units: AtomicStream,
    private readonly drops: AtomicStream,
  ) {}

  static async open(work: string, phase: string, u: number): Promise<UnitOutput> {
    return new UnitOutput(await AtomicStream.open(unitsFile(work, phase, u)), await AtomicStream.open(dropsFile(work, phase, u)));
  }

  async add(r: DocRecord): Promise<void> {
    crashPoint("unit-records");
    this.records++;
    this.frames.rec(r);
    if (this.frames.length >= 1 << 20) await this.units.write(this.frames.take());
    if (this.dropFrames.length >= 1 << 20) await this.drops.write(this.dropFrames.take());
  }

  /** Synchronous for stages; written with the records. */
  drop(r: DocRecord, reason: string, detail?: Record<string, unknown>): void {
    this.dropFrames.drop(r, reason, detail);
  }

  async commit(): Promise<void> {
    await this.units.write(this.frames.take());
    await this.drops.write(this.dropFrames.take());
    await this.units.commit();
    await this.drops.commit();
  }

  async abort(): Promise<void> {
    await this.units.abort();
    await this.drops.abort();
  }
}

export type { UnitEvent };

/** A packing group: consecutive units, whole input files only. */
export interface PackGroup {
  g: number;
  units: number[];
  bytes: number;
}

/**
 * Packing groups: consecutive input files in build order, a new group started before the file that
 * would take the group past `groupBytes` (a larger file is a group of its own). Defined by the files
 * alone, never by parts or tasks, so the packed bytes do not depend on how the work is cut.
 */
export function packGroups(units: Unit[], groupBytes: number): PackGroup[] {
  const groups: PackGroup[] = [];
  let cur: PackGroup | undefined;
  for (const unit of units) {
    const firstOfFile = !unit.range || unit.range.start === 0;
    if (firstOfFile && (!cur || (cur.bytes > 0 && cur.bytes + unit.size > groupBytes))) groups.push((cur = { g: groups.length, units: [], bytes: 0 }));
    cur!.units.push(unit.u);
    if (firstOfFile) cur!.bytes += unit.size;
  }
  return groups;
}
