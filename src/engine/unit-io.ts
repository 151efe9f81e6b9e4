// What every task needs: the input files (units) in build order, the plan's key, ids fixed across
// files, and reading / writing one unit's records between phases.
import { open, stat } from "node:fs/promises";
import { compressionOf } from "../sources/open.js";
import { join } from "node:path";
import { listFiles } from "../sources/source.js";
import type { LoadedPipeline } from "../pipeline/load.js";
import type { SourceConfig } from "../pipeline/config.js";
import { toolVersion } from "../output/manifest.js";
import { BuildCache } from "../cache/build-cache.js";
import { dropEvent, eventRecord, readEvents, recordEvent, type UnitEvent } from "../cache/record-events.js";
import { SiftpackError, describeSystemError } from "../errors.js";
import { copiesFor } from "./weights.js";
import type { DocRecord, Logger, StageContext } from "../types.js";
import type { Phase, PhasePlan } from "./plan.js";
import { AtomicStream, unitName, type TaskDone } from "./workdir.js";
import { crashPoint } from "../lib/crash-point.js";
import { repeatedLines } from "./lines-phase.js";

export interface Unit {
  u: number;
  source: SourceConfig;
  path: string;
  /** The whole file's size. */
  size: number;
  /** Set when the unit is a part of a large uncompressed JSONL file: bytes [start, end), cut after a newline. */
  range?: { start: number; end: number };
}

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
}

/**
 * Default ids count rows across a source's files (`<source>:<n>`): the read phase numbers rows per
 * file, and every later reader adds the rows of the source's earlier files, known once read is done.
 */
const fixers = new WeakMap<TaskEnv, (u: number, r: { id: string; seq: number }) => void>();
const offsets = new WeakMap<TaskEnv, Int32Array>();

export function idFixer(env: TaskEnv): (u: number, r: { id: string; seq: number }) => void {
  let f = fixers.get(env);
  if (!f) fixers.set(env, (f = makeIdFixer(env)));
  return f;
}

function makeIdFixer(env: TaskEnv): (u: number, r: { id: string; seq: number }) => void {
  const rows = new Map<number, number>();
  for (const d of env.done.get("read") ?? []) for (const [u, f] of Object.entries(d.units)) rows.set(Number(u), f.rows ?? 0);
  const offset = new Int32Array(env.units.length);
  const bySource = new Map<string, number>();
  for (const unit of env.units) {
    const before = bySource.get(unit.source.name) ?? 0;
    offset[unit.u] = before;
    bySource.set(unit.source.name, before + (rows.get(unit.u) ?? 0));
  }
  return (u, r) => {
    const unit = env.units[u];
    if (unit.source.id === undefined) r.id = `${unit.source.name}:${offset[u] + r.seq + 1}`;
  };
}

/**
 * A part of a file numbers its lines from 1: later readers add the lines of the file's earlier
 * parts (known from the read phase's markers). Returns the offset per unit.
 */
export function lineOffsets(env: TaskEnv): Int32Array {
  let o = offsets.get(env);
  if (!o) offsets.set(env, (o = makeLineOffsets(env)));
  return o;
}

function makeLineOffsets(env: TaskEnv): Int32Array {
  const lines = new Map<number, number>();
  for (const d of env.done.get("read") ?? []) for (const [u, f] of Object.entries(d.units)) if (f.lines !== undefined) lines.set(Number(u), f.lines);
  const offset = new Int32Array(env.units.length);
  for (const unit of env.units) {
    if (!unit.range || unit.range.start === 0 || unit.u === 0) continue;
    offset[unit.u] = offset[unit.u - 1] + (lines.get(unit.u - 1) ?? 0);
  }
  return offset;
}

/** A decision of exact-dups or clusters about one row: drop it (reason, detail) or tag its cluster. */
export interface Decision {
  i: number;
  drop?: { reason: string; detail?: Record<string, unknown> };
  cluster?: string;
}

export const unitsFile = (work: string, phase: string, u: number) => join(work, phase, "units", `${unitName(u)}.jsonl`);
export const dropsFile = (work: string, phase: string, u: number) => join(work, phase, "drops", `${unitName(u)}.jsonl`);
/** Per file: the summaries of a pass's stages with `gather`, a JSON array by entry. */
export const summaryFile = (work: string, phase: string, u: number) => join(work, phase, "summaries", `${unitName(u)}.json`);
export const decisionsFile = (work: string, phase: string, u: number, part?: number) =>
  part === undefined ? join(work, phase, "decisions", `${unitName(u)}.jsonl`) : join(work, phase, "decisions", String(part).padStart(5, "0"), `${unitName(u)}.jsonl`);

const materializes = (ph: Phase) => ph.does.kind === "read" || ph.does.kind === "pass" || ph.does.kind === "whole";

/** The phase whose unit files hold the records as they stand before phase `k`, and the decisions made since. */
export function sourceOf(plan: PhasePlan, k: number): { from: Phase; decisions: Phase[] } {
  let m = k - 1;
  while (!materializes(plan.phases[m])) m--;
  return { from: plan.phases[m], decisions: plan.phases.slice(m + 1, k).filter((ph) => ph.does.kind === "exact" || ph.does.kind === "clusters" || ph.does.kind === "lines") };
}

/** A phase's decisions about unit u: exact-dups writes one file per partition, clusters one per file. */
async function loadDecisions(env: TaskEnv, phase: Phase, u: number): Promise<Map<number, Decision>> {
  const m = new Map<number, Decision>();
  const paths = phase.does.kind === "exact" ? Array.from({ length: env.plan.tasks }, (_, p) => decisionsFile(env.plan.workDir, phase.name, u, p)) : [decisionsFile(env.plan.workDir, phase.name, u)];
  for (const path of paths) for await (const d of readEvents(path) as AsyncIterable<unknown> as AsyncIterable<Decision>) m.set(d.i, d);
  return m;
}

/**
 * The records of unit `u` as they reach phase `k`: ids fixed, and the decisions since the last
 * unit files applied (drops reported through `drop`). Straight after the read phase, mixture
 * weights of 0 (records subsampled away) are applied here too, since they need the final id.
 */
export async function* recordsBefore(env: TaskEnv, k: number, u: number, drop: StageContext["drop"], count: StageContext["count"]): AsyncGenerator<DocRecord> {
  const { from, decisions } = sourceOf(env.plan, k);
  const fix = idFixer(env);
  const lines = decisions.find((d) => d.does.kind === "lines");
  const strip = lines ? await repeatedLines(env, lines) : undefined;
  const maps = await Promise.all(decisions.filter((d) => d !== lines).map((d) => loadDecisions(env, d, u)));
  const unit = env.units[u];
  const weight = unit.source.weight;
  const lineOffset = from.does.kind === "read" ? lineOffsets(env)[u] : 0;
  for await (const e of readEvents(unitsFile(env.plan.workDir, from.name, u))) {
    if (e.k !== "rec") continue;
    const r = eventRecord(e);
    fix(u, r);
    r.origin.line += lineOffset;
    if (from.does.kind === "read" && weight !== 1 && copiesFor(weight, `${r.source}\u0000${r.id}`, env.p.config.seed) === 0) {
      drop(r, "subsampled", { weight });
      continue;
    }
    let dropped = false;
    for (const m of maps) {
      const d = m.get(r.seq);
      if (!d) continue;
      if (d.drop) {
        drop(r, d.drop.reason, d.drop.detail);
        dropped = true;
        break;
      }
      if (d.cluster !== undefined) r.cluster = d.cluster;
    }
    if (dropped) continue;
    // Steps follow each other with a pass between them, so a lines decision is the only one here when present.
    if (strip && !strip(r, drop, count)) continue;
    yield r;
  }
}

/** One unit's output of a phase: its records and the drops the phase made, each file complete or absent. */
export class UnitOutput {
  records = 0;
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
    await this.units.write(JSON.stringify(recordEvent(r)) + "\n");
  }

  /** Synchronous for stages; the stream buffers until the next `add`. */
  drop(r: DocRecord, reason: string, detail?: Record<string, unknown>): void {
    this.drops.out.write(JSON.stringify(dropEvent(r, reason, detail)) + "\n");
  }

  async commit(): Promise<void> {
    await this.units.commit();
    await this.drops.commit();
  }

  async abort(): Promise<void> {
    await this.units.abort();
    await this.drops.abort();
  }
}

export type { UnitEvent };
