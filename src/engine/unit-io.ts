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
      if (!cuttable(source, path) || size <= unitBytes) {
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

/** A file that can be read in parts cut at line ends: uncompressed JSONL (one record a line, positioned reads). */
const cuttable = (source: SourceConfig, path: string) => source.format === "jsonl" && compressionOf(path) === "none";

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

/**
 * Whether a phase writes its units' records (and drops) for the phases after it. A pass without
 * stages of its own only collects for the next keyed stage: its records would be the ones before it
 * with the same decisions applied, so it writes none, and the next reader applies those decisions.
 */
export const materializes = (ph: Phase) => ph.does.kind === "read" || ph.does.kind === "whole" || (ph.does.kind === "pass" && ph.does.entries.length > 0);

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
/** A keyed stage's applier, and the paths of the files it read while being prepared (shared results, collected material). */
interface PreparedApplier {
  make: (u: number) => Promise<UnitApplier>;
  read: string[];
}
const appliers = new WeakMap<TaskEnv, Map<number, Promise<PreparedApplier>>>();

/** Prepared once per task: every unit's reader applies the same shared results. */
export function applierOf(env: TaskEnv, k: number, count: StageContext["count"]): Promise<PreparedApplier> {
  let m = appliers.get(env);
  if (!m) appliers.set(env, (m = new Map()));
  let a = m.get(k);
  if (!a) {
    const steps = env.plan.keyed.get(k)!;
    const dirs = keyedDirs(env, k);
    const read: string[] = [];
    // What the applier reads is noted, so a step that applies it can be keyed by those bytes (step-keys.ts).
    const spy = new Proxy(dirs, {
      get(t, prop) {
        const v = Reflect.get(t, prop, t);
        if (typeof v !== "function") return v;
        if (prop === "shared") return (name: string, p?: number) => (read.push(t.sharedPath(name, p)), t.shared(name, p));
        if (prop === "read" || prop === "lines" || prop === "size" || prop === "path")
          return (name: string, u: number, p?: number) => (read.push(t.path(name, u, p)), v.call(t, name, u, p));
        return v.bind(t);
      },
    });
    m.set(k, (a = keyedApplier(steps.form, steps.entry.options, spy, stepContext(env, count)).then((make) => ({ make, read }))));
  }
  return a;
}

/**
 * The records of unit `u` as they reach phase `k`: numbering fixed (after the read phase), mixture
 * weights of 0 applied (they need the final id), then the decisions of the keyed steps since the
 * last unit files, in pipeline order; drops are reported through `ctx.drop`. `text: false`: the
 * caller does not read the records' text, which is then left out where nothing else needs it;
 * `text: "utf8"`: the caller reads only its UTF-8 bytes (DocRecord.utf8), likewise. `rows`: only
 * the records of those file-wide rows (records are in row order: reading stops past them).
 */
export async function* recordsBefore(env: TaskEnv, k: number, u: number, ctx: StageContext, o: { text?: boolean | "utf8"; rows?: { from: number; to: number } } = {}): AsyncGenerator<DocRecord> {
  const { from, keyed } = sourceOf(env.plan, k);
  const apply: UnitApplier[] = [];
  for (const s of keyed) apply.push(await (await applierOf(env, s, ctx.count)).make(u));
  const weight = env.units[u].source.weight;
  const path = unitsFile(env.plan.workDir, from.name, u);
  env.meter.reading(path, 0, await fileSize(path));
  // Text left undecoded only when no keyed step's decision is applied here (an applier may read or edit it).
  // Row numbers in the read phase's files are the part's own; fixFromRead makes them the file's.
  const fromSeq = o.rows ? o.rows.from - (from.does.kind === "read" ? unitFixes(env)[u].rows : 0) : undefined;
  next: for await (const e of readEvents(path, { text: keyed.length > 0 ? true : (o.text ?? true), fromSeq })) {
    if (e.k !== "rec") continue;
    let r: DocRecord | undefined = e.r;
    if (from.does.kind === "read") fixFromRead(env, u, r);
    // Only the rows asked for (a packing group's share of a large file), before any decision counts
    // them: rows before them were passed over undecoded (fromSeq), and reading stops past them.
    if (o.rows && r.seq >= o.rows.to) break;
    if (from.does.kind === "read") {
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

/** A packing group: consecutive whole input files, or a share of the rows of one large file. */
export interface PackGroup {
  g: number;
  units: number[];
  bytes: number;
  /**
   * Set when a file larger than the group size is cut into several groups: the file's rows
   * [from, to) (numbered from 0 across its parts) are this group's, and `last` says the group holds
   * the file's end (and with it a truncation notice).
   */
  rows?: { from: number; to: number; last: boolean };
}

/**
 * Packing groups: consecutive input files in build order, a new group started before the file that
 * would take the group past `groupBytes`. An uncompressed JSONL file larger than that is cut into ceil(size /
 * groupBytes) groups of equal shares of its rows (`rowsOf` gives each unit's rows, known once the
 * read phase is done; without it such a file is one group). Defined by the files and their rows
 * alone, never by parts (`unit_mb`) or tasks, so the packed bytes do not depend on how the work is
 * cut; and no task packs more than about `groupBytes` of a file however large it is.
 */
export function packGroups(units: Unit[], groupBytes: number, rowsOf?: (u: number) => number): PackGroup[] {
  const groups: PackGroup[] = [];
  let cur: PackGroup | undefined;
  for (let at = 0; at < units.length; ) {
    // The file's units: its first and every later part.
    let end = at + 1;
    while (end < units.length && units[end].range && units[end].range!.start > 0) end++;
    const file = units.slice(at, end);
    at = end;
    const size = file[0].size;
    // Only a file that can be cut into parts: a group reads its share of the rows from the parts they lie in.
    if (size > groupBytes && rowsOf && cuttable(file[0].source, file[0].path)) {
      cur = undefined;
      groups.push(...rowGroups(file, Math.ceil(size / groupBytes), rowsOf, groups.length));
      continue;
    }
    if (!cur || (cur.bytes > 0 && cur.bytes + size > groupBytes)) groups.push((cur = { g: groups.length, units: [], bytes: 0 }));
    cur.units.push(...file.map((u) => u.u));
    cur.bytes += size;
  }
  return groups;
}

/**
 * The analyses' collection is kept per piece: one unit's records as one group packs them (a group's
 * units in order; a file cut into several groups lies in one piece per group). A piece is collected
 * once and reused while what packing keeps of its unit is the same, even when its group is packed
 * again: a new file joining the last group, or a decision changed in another unit of the group.
 * Piece numbers run group by group, so `first[g] + j` is the piece of group g's j-th unit.
 */
export function collectPieces(groups: PackGroup[]): { count: number; first: number[] } {
  const first: number[] = [];
  let count = 0;
  for (const g of groups) {
    first.push(count);
    count += g.units.length;
  }
  return { count, first };
}

/** One large file's groups: n equal shares of its rows, each with the units its rows lie in. */
function rowGroups(file: Unit[], n: number, rowsOf: (u: number) => number, first: number): PackGroup[] {
  const starts: number[] = [];
  let total = 0;
  for (const u of file) {
    starts.push(total);
    total += rowsOf(u.u);
  }
  const out: PackGroup[] = [];
  for (let j = 0; j < n; j++) {
    const from = Math.floor((j * total) / n);
    const to = Math.floor(((j + 1) * total) / n);
    const last = j === n - 1;
    // A file with fewer rows than groups leaves some shares empty; the last group always stays (it reports a truncation).
    if (to === from && !last) continue;
    const units = file.filter((u, k) => (starts[k] < to && starts[k] + rowsOf(u.u) > from) || (last && k === file.length - 1)).map((u) => u.u);
    out.push({ g: first + out.length, units, bytes: Math.round((file[0].size * (to - from)) / Math.max(1, total)), rows: { from, to, last } });
  }
  return out;
}
