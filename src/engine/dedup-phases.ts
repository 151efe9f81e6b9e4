// The global steps of de-duplication as phases: exact-dups (one task), buckets (per partition of
// band buckets) and clusters (one task). Documents are numbered in input order across files
// (file by file, records in order), so every decision equals that of one stream through the stage.
import { closeSync, mkdtempSync, openSync, readSync, rmSync } from "node:fs";
import { mkdir, readFile, rename } from "node:fs/promises";
import { randomBytes } from "node:crypto";
import { join } from "node:path";
import { readEvents } from "../cache/record-events.js";
import { BandBuckets, MAX_DOCUMENTS } from "../dedup/buckets.js";
import { chooseKept, joinBucket } from "../dedup/clusters.js";
import { writeClusters } from "../dedup/cluster-file.js";
import { estimateJaccard } from "../dedup/signature.js";
import { UnionFind } from "../dedup/union-find.js";
import { round4 } from "../dedup/minhash-stage.js";
import type { MinhashOptions } from "../dedup/options.js";
import { resolveBands } from "../dedup/lsh-params.js";
import { SiftpackError } from "../errors.js";
import { bucketFile, docsFile, exactFile, sigFile } from "./collect.js";
import { decisionsFile, idFixer, type Decision, type TaskEnv } from "./unit-io.js";
import { writeAtomic } from "./workdir.js";
import { shareOf, type Phase } from "./plan.js";

/** The per-file phase that gathered for global phase `k`: the nearest per-file phase before it. */
export function collectingPhase(env: TaskEnv, k: number): Phase {
  let m = k - 1;
  while (!env.plan.phases[m].perFile) m--;
  return env.plan.phases[m];
}

async function writeDecisions(env: TaskEnv, byUnit: Map<number, Decision[]>, part?: number): Promise<void> {
  for (const unit of env.units) {
    const list = byUnit.get(unit.u) ?? [];
    await writeAtomic(decisionsFile(env.plan.workDir, env.phase.name, unit.u, part), list.map((d) => JSON.stringify(d) + "\n").join(""));
  }
}

/**
 * exact-dups, per partition of text hashes: the first record of every text in input order stays;
 * the others are dropped naming it. Equal texts share a hash and so a partition.
 */
export async function exactPhase(env: TaskEnv): Promise<void> {
  const from = collectingPhase(env, env.phase.index);
  const fix = idFixer(env);
  const { from: p0, to: p1 } = shareOf(env.index, env.phase.tasks, env.plan.tasks);
  for (let part = p0; part < p1; part++) {
    const first = new Map<bigint, string>();
    const byUnit = new Map<number, Decision[]>();
    let dropped = 0;
    for (const unit of env.units) {
      const list: Decision[] = [];
      for await (const e of readEvents(exactFile(env.plan.workDir, from.name, part, unit.u)) as AsyncIterable<unknown> as AsyncIterable<{ i: number; h: string; id: string }>) {
        const r = { id: e.id, seq: e.i };
        fix(unit.u, r);
        const h = BigInt(`0x${e.h}`);
        const of = first.get(h);
        if (of === undefined) first.set(h, r.id);
        else {
          list.push({ i: e.i, drop: { reason: "duplicate", detail: { of, xxh64: e.h } } });
          dropped++;
        }
      }
      if (list.length) byUnit.set(unit.u, list);
    }
    await writeDecisions(env, byUnit, part);
    env.log.info({ phase: env.phase.name, partition: part, texts: first.size, duplicates: dropped }, "exact duplicates chosen");
  }
}

/** Documents per file reaching the MinHash step, and where each file's numbering starts. */
function docOffsets(env: TaskEnv, from: Phase): { offset: Float64Array; total: number } {
  const offset = new Float64Array(env.units.length + 1);
  const counts = new Map<number, number>();
  for (const d of env.done.get(from.name) ?? []) for (const [u, f] of Object.entries(d.units)) counts.set(Number(u), f.records);
  for (const unit of env.units) offset[unit.u + 1] = offset[unit.u] + (counts.get(unit.u) ?? 0);
  const total = offset[env.units.length];
  if (total > MAX_DOCUMENTS) throw new SiftpackError("SP_STAGE", `dedup (minhash): more than ${MAX_DOCUMENTS} records reach this stage; split the input into several builds`);
  return { offset, total };
}

/** Random access to the signatures of documents numbered across files (positioned reads, one descriptor per file). */
class Signatures {
  private readonly fds = new Map<number, number>();
  constructor(
    private readonly env: TaskEnv,
    private readonly phase: string,
    private readonly offset: Float64Array,
    readonly k: number,
  ) {}

  private locate(d: number): { u: number; j: number } {
    let lo = 0;
    let hi = this.offset.length - 2;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (this.offset[mid] <= d) lo = mid;
      else hi = mid - 1;
    }
    return { u: lo, j: d - this.offset[lo] };
  }

  row(d: number, into: Uint32Array): Uint32Array {
    const { u, j } = this.locate(d);
    let fd = this.fds.get(u);
    if (fd === undefined) this.fds.set(u, (fd = openSync(sigFile(this.env.plan.workDir, this.phase, u), "r")));
    const bytes = new Uint8Array(into.buffer, into.byteOffset, into.byteLength);
    let got = 0;
    while (got < bytes.length) {
      const n = readSync(fd, bytes, got, bytes.length - got, j * this.k * 4 + got);
      if (n === 0) throw new Error(`dedup: signature file of input ${u} ends early`);
      got += n;
    }
    return into;
  }

  close(): void {
    for (const fd of this.fds.values()) closeSync(fd);
    this.fds.clear();
  }
}

export const edgesFile = (work: string, phase: string, part: number) => join(work, phase, "edges", `${String(part).padStart(5, "0")}.bin`);

/** buckets: for each partition of the task's share, the confirmed pairs of every shared bucket, as (a, b) uint32 pairs. */
export async function bucketsPhase(env: TaskEnv): Promise<{ compared: number; edges: number }> {
  const o = (env.phase.does as { entry: { options: MinhashOptions } }).entry.options;
  const from = collectingPhase(env, env.phase.index);
  const { offset, total } = docOffsets(env, from);
  const k = o.permutations;
  const sigs = new Signatures(env, from.name, offset, k);
  const a = new Uint32Array(k);
  const b = new Uint32Array(k);
  const { from: p0, to: p1 } = shareOf(env.index, env.phase.tasks, env.plan.tasks);
  let compared = 0;
  let edgeCount = 0;
  await mkdir(join(env.plan.workDir, env.phase.name), { recursive: true });
  const tmp = mkdtempSync(join(env.plan.workDir, env.phase.name, `.buckets-${env.index}-`));
  try {
    for (let part = p0; part < p1; part++) {
      const buckets = new BandBuckets(o.memory_mb * 2 ** 20 * 0.5, tmp);
      for (const unit of env.units) {
        const raw = await readFile(bucketFile(env.plan.workDir, from.name, part, unit.u));
        const w = new Uint32Array(raw.buffer, raw.byteOffset, raw.byteLength / 4);
        for (let x = 0; x < w.length; x += 4) buckets.add(w[x], w[x + 1], offset[w[x + 2]] + w[x + 3]);
      }
      const uf = new UnionFind(total);
      const edges: number[] = [];
      const similar = (d: number, e: number) => {
        const yes = estimateJaccard(sigs.row(d, a), 0, sigs.row(e, b), 0, k) >= o.threshold;
        if (yes) edges.push(d, e);
        return yes;
      };
      for (const group of buckets.groups()) compared += joinBucket(group, uf, similar);
      buckets.close();
      edgeCount += edges.length / 2;
      await writeAtomic(edgesFile(env.plan.workDir, env.phase.name, part), new Uint8Array(Uint32Array.from(edges).buffer));
    }
  } finally {
    sigs.close();
    rmSync(tmp, { recursive: true, force: true });
  }
  return { compared, edges: edgeCount };
}

/** clusters: joins every partition's pairs, keeps one record per cluster, writes clusters.jsonl and the per-file decisions. */
export async function clustersPhase(env: TaskEnv, count: (name: string, n?: number) => void): Promise<string> {
  const does = env.phase.does as { entry: { options: MinhashOptions }; ordinal: number };
  const o = does.entry.options;
  const buckets = env.plan.phases[env.phase.index - 1];
  const from = collectingPhase(env, env.phase.index);
  const { offset, total: n } = docOffsets(env, from);
  const fix = idFixer(env);
  const ids: string[] = new Array(n);
  const rows = new Int32Array(n);
  const unitOf = new Int32Array(n);
  const length = new Int32Array(n);
  const short = new Uint8Array(n);
  const rank = new Int32Array(n);
  const list = o.sources ?? [];
  for (const unit of env.units) {
    let d = offset[unit.u];
    const r = list.indexOf(unit.source.name);
    for await (const e of readEvents(docsFile(env.plan.workDir, from.name, unit.u)) as AsyncIterable<unknown> as AsyncIterable<{ i: number; id: string; len: number; short: number }>) {
      const rec = { id: e.id, seq: e.i };
      fix(unit.u, rec);
      ids[d] = rec.id;
      rows[d] = e.i;
      unitOf[d] = unit.u;
      length[d] = e.len;
      short[d] = e.short;
      rank[d] = r < 0 ? list.length : r;
      d++;
    }
  }
  const uf = new UnionFind(n);
  for (let part = 0; part < env.plan.tasks; part++) {
    const raw = await readFile(edgesFile(env.plan.workDir, buckets.name, part));
    const w = new Uint32Array(raw.buffer, raw.byteOffset, raw.byteLength / 4);
    for (let x = 0; x < w.length; x += 2) uf.union(w[x], w[x + 1]);
  }
  const kept = chooseKept(uf, o.keep, length, rank);
  const sigs = new Signatures(env, from.name, offset, o.permutations);
  const a = new Uint32Array(o.permutations);
  const b = new Uint32Array(o.permutations);
  const similarity = new Float32Array(n);
  for (let d = 0; d < n; d++) {
    const c = kept.keptOf[d];
    if (c >= 0) similarity[d] = c === d ? 1 : estimateJaccard(sigs.row(d, a), 0, sigs.row(c, b), 0, o.permutations);
  }
  sigs.close();
  const sourceOfDoc = (d: number) => env.units[unitOf[d]].source.name;
  const clusterId = (d: number) => `${sourceOfDoc(d)}/${ids[d]}`;
  const name = does.ordinal === 1 ? "clusters.jsonl" : `clusters-${does.ordinal}.jsonl`;
  const filesDir = join(env.plan.workDir, env.phase.name, "files");
  await mkdir(filesDir, { recursive: true });
  const tmp = join(filesDir, `.${name}.tmp-${randomBytes(4).toString("hex")}`);
  writeClusters(tmp, uf, kept.keptOf, { clusterId, source: sourceOfDoc, id: (d) => ids[d], similarity: (d) => similarity[d], short: (d) => short[d] === 1 });
  await rename(tmp, join(filesDir, name));
  const byUnit = new Map<number, Decision[]>();
  for (let d = 0; d < n; d++) {
    const c = kept.keptOf[d];
    if (c < 0 || (c === d && o.action !== "mark")) continue;
    const dec: Decision =
      o.action === "mark" ? { i: rows[d], cluster: clusterId(c) } : { i: rows[d], drop: { reason: "near-duplicate", detail: { of: ids[c], of_source: sourceOfDoc(c), similarity: round4(similarity[d]) } } };
    let l = byUnit.get(unitOf[d]);
    if (!l) byUnit.set(unitOf[d], (l = []));
    l.push(dec);
  }
  await writeDecisions(env, byUnit);
  count("dedup:near-duplicate-clusters", kept.clusters);
  count(o.action === "mark" ? "dedup:near-duplicates-marked" : "dedup:near-duplicates-dropped", kept.duplicates);
  const { bands, rows: r } = resolveBands(o);
  env.log.info({ stage: "dedup", method: "minhash", records: n, bands, rows: r, clusters: kept.clusters, near_duplicates: kept.duplicates, action: o.action }, "near-duplicate clusters found");
  return name;
}
