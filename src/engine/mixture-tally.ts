// The figures a mixture is planned from, gathered per unit where the records are last written
// before packing (no pass of its own): for every train record, its rank in its source's seeded
// order and its tokens (20 bytes a record). Every pack task, and assemble, merges them into the
// same plan (mixture.ts).
import { readFile } from "node:fs/promises";
import { join } from "node:path";
import { SiftpackError } from "../errors.js";
import { defaultId } from "../sources/source.js";
import type { DocRecord } from "../types.js";
import type { MixtureConfig } from "../pipeline/config.js";
import { mixtureRank, pickExtra, planFrom, restsOf, type MixturePlan, type Pick, type TallyEntry } from "./mixture.js";
import { IDS_CHECK, type Phase, type PhasePlan } from "./plan.js";
import { keyedDirs, sourceOf, unitFixes, type TaskEnv } from "./unit-io.js";
import { unitName, writeAtomic } from "./workdir.js";

/** rank (f64), tokens, row as written, line as written (u32 each). */
const ENTRY = 20;

export const tallyFile = (work: string, phase: string, u: number) => join(work, phase, "mixture", `${unitName(u)}.bin`);

/** The phase whose unit files the pack phase reads, when the pipeline has a mixture: it writes the tallies. */
export function tallyPhase(plan: PhasePlan, hasMixture: boolean): Phase | undefined {
  if (!hasMixture) return undefined;
  const k = plan.phases.findIndex((ph) => ph.does.kind === "pack");
  return sourceOf(plan, k).from;
}

/** Whether the phase at work in `env` writes the mixture's tallies (a mixture, and packing reads this phase's records). */
export function talliesHere(env: TaskEnv): boolean {
  return tallyPhase(env.plan, env.p.config.mixture !== undefined)?.name === env.phase.name;
}

/** One unit's train records, as the tallying phase writes them. */
export class TallyWriter {
  private buf = new Uint8Array(ENTRY * 1024);
  private view = new DataView(this.buf.buffer);
  private n = 0;
  constructor(private readonly seed: number) {}

  add(r: DocRecord): void {
    if ((r.split ?? "train") !== "train" || !r.tokens) return;
    if ((this.n + 1) * ENTRY > this.buf.length) {
      const bigger = new Uint8Array(this.buf.length * 2);
      bigger.set(this.buf);
      this.buf = bigger;
      this.view = new DataView(bigger.buffer);
    }
    const at = this.n++ * ENTRY;
    this.view.setFloat64(at, mixtureRank(r.source, r.id, this.seed), true);
    this.view.setUint32(at + 8, r.tokens.length, true);
    this.view.setUint32(at + 12, r.seq, true);
    this.view.setUint32(at + 16, r.origin.line, true);
  }

  async write(work: string, phase: string, u: number): Promise<void> {
    await writeAtomic(tallyFile(work, phase, u), this.buf.subarray(0, this.n * ENTRY));
  }
}

const plans = new WeakMap<TaskEnv, Promise<MixturePlan | undefined>>();

/** The build's mixture plan from every unit's tally (once per task), or undefined without a mixture. */
export function mixtureOf(env: TaskEnv): Promise<MixturePlan | undefined> {
  let p = plans.get(env);
  if (!p) plans.set(env, (p = merge(env)));
  return p;
}

/**
 * Ranks are cut into this many equal buckets: the merge sums tokens per bucket, then sorts only the
 * records of the bucket where each source's rest is crossed, so no task holds every record (a power
 * of two: rank × BUCKETS is exact for ranks of 53 bits).
 */
const BUCKETS = 1 << 16;

interface SourceBuckets {
  tokens: Float64Array;
  documents: Uint32Array;
}

async function merge(env: TaskEnv): Promise<MixturePlan | undefined> {
  const { config } = env.p;
  const from = tallyPhase(env.plan, config.mixture !== undefined);
  if (!from || !config.mixture) return undefined;
  return planByBuckets(config.mixture, config.sources.map((s) => s.name), env.p.file, (f) => eachEntry(env, from, f));
}

/**
 * The plan of planMixture from two passes over the records (`each` calls back once per train
 * record, in the same order both times), holding per source only its tokens per bucket of ranks and
 * the records of the one bucket where its rest is crossed.
 */
export async function planByBuckets(m: MixtureConfig, names: string[], file: string, each: (f: (source: string, rank: number, tokens: number) => void) => Promise<void>, count = BUCKETS): Promise<MixturePlan> {
  const totals = new Map(names.map((n) => [n, { tokens: 0, documents: 0 }]));
  const buckets = new Map<string, SourceBuckets>(names.map((n) => [n, { tokens: new Float64Array(count), documents: new Uint32Array(count) }]));
  await each((source, rank, tokens) => {
    const t = totals.get(source)!;
    t.tokens += tokens;
    t.documents++;
    const b = buckets.get(source)!;
    const k = Math.floor(rank * count);
    b.tokens[k] += tokens;
    b.documents[k]++;
  });
  const rests = restsOf(m, names, totals, file);
  // Per source: the bucket where its rest is crossed, with the tokens and documents of the buckets before it.
  const crossing = new Map<string, { k: number; before: number; documents: number; entries: TallyEntry[] }>();
  for (const name of names) {
    const rest = rests.rest.get(name)!;
    if (rest <= 0) continue;
    const b = buckets.get(name)!;
    let before = 0;
    let documents = 0;
    let k = 0;
    while (k < count - 1 && before + b.tokens[k] < rest) {
      before += b.tokens[k];
      documents += b.documents[k++];
    }
    crossing.set(name, { k, before, documents, entries: [] });
  }
  if (crossing.size > 0)
    await each((source, rank, tokens) => {
      const c = crossing.get(source);
      if (c && Math.floor(rank * count) === c.k) c.entries.push({ rank, tokens });
    });
  const picks = new Map<string, Pick>();
  for (const name of names) {
    const c = crossing.get(name);
    if (!c) {
      picks.set(name, { used: 0, documents: 0, cut: 0 });
      continue;
    }
    // Every record of the earlier buckets is taken; within the crossing bucket, by rank as pickExtra does over a whole source.
    const p = pickExtra(c.entries, rests.rest.get(name)! - c.before, (c.k + 1) / count, c.k / count);
    picks.set(name, { used: c.before + p.used, documents: c.documents + p.documents, cut: p.cut, ...(p.partial ? { partial: p.partial } : {}) });
  }
  return planFrom(m, names, totals, rests, picks);
}

/** Every train record of every unit's tally, as (source, rank, tokens): ids repeated across units left out. */
async function eachEntry(env: TaskEnv, from: Phase, f: (source: string, rank: number, tokens: number) => void): Promise<void> {
  const work = env.plan.workDir;
  const { seed } = env.p.config;
  const ids = env.plan.keyed.has(IDS_CHECK) ? keyedDirs(env, IDS_CHECK) : undefined;
  for (const unit of env.units) {
    const fix = unitFixes(env)[unit.u];
    let bytes: Buffer;
    try {
      bytes = await readFile(tallyFile(work, from.name, unit.u));
    } catch (err) {
      throw new SiftpackError("SP_WORK", `the mixture's figures of unit ${unit.u} (${unit.path}) are missing from ${join(work, from.name)}: run phase "${from.name}" again`, { cause: err });
    }
    const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
    // Records whose id repeats an earlier unit's are quarantined when packed: they are not train.
    const repeated = ids ? await ids.decisions(unit.u) : undefined;
    // Ids read in the read phase are final only once the file's earlier parts are counted (default ids).
    const refix = from.does.kind === "read" && unit.source.id === undefined;
    for (let at = 0; at < bytes.length; at += ENTRY) {
      const seq = view.getUint32(at + 12, true);
      if (repeated?.has(from.does.kind === "read" ? seq : seq - fix.rows)) continue;
      const rank = refix ? mixtureRank(unit.source.name, defaultId(unit.source, fix.idFile, view.getUint32(at + 16, true) + fix.lines), seed) : view.getFloat64(at, true);
      f(unit.source.name, rank, view.getUint32(at + 8, true));
    }
  }
}
