// MinHash near-duplicates as a keyed step. Each unit's records are signed (in batches, on worker
// threads) and every band key goes to the partition of that key; a partition step confirms the
// candidate pairs of its buckets (signature estimate, or exact Jaccard of the shingle sets with
// `confirm: exact`); the resolve step joins every partition's pairs into clusters, keeps one record
// each and writes clusters.jsonl. Documents are numbered in input order across units, so every
// decision equals that of one stream through the stage, whatever the units and partitions.
//
// Files of one unit (own): sig.bin (k uint32 per record, in order), docs.jsonl ({i, id, s, len, b,
// short} per record, and {at, n}: the text's bytes in texts.bin with confirm: exact).
// Per partition: buckets.bin, entries (band key, band, unit, record j of the unit) as 4 × uint32,
// partition = band key mod partitions. A partition shares edges.bin, confirmed pairs as uint32 (a, b).
import { BandBuckets, MAX_DOCUMENTS } from "./buckets.js";
import { chooseKept, clusterSizes, joinBucket } from "./clusters.js";
import { writeClusters } from "./cluster-file.js";
import { resolveBands } from "./lsh-params.js";
import type { MinhashOptions } from "./options.js";
import { SignerPool } from "./pool.js";
import type { BatchResult, SignerParams } from "./signer.js";
import { estimateJaccard } from "./signature.js";
import { jaccard, shingleSet, Shingler } from "./shingles.js";
import { UnionFind } from "./union-find.js";
import { SiftpackError } from "../errors.js";
import type { DocRecord } from "../types.js";
import { OwnFileReader, type CollectOutput, type KeyedFiles, type KeyedForm, type UnitCollector } from "../stages/keyed.js";

/** Texts per batch sent to a signing thread, and the text size that closes a batch early. */
const BATCH_DOCS = 256;
const BATCH_CHARS = 1 << 20;
/** Exact-Jaccard checks keep recently used shingle sets; a bucket's members are checked against its first ones, so reuse is high. */
const SET_CACHE = 4096;

export function signerParams(o: MinhashOptions, seed: number): SignerParams {
  const { bands, rows } = resolveBands(o);
  return { shingle: { kind: o.shingle, ngram: o.ngram, lowercase: o.lowercase }, permutations: o.permutations, bands, rows, seed };
}

export function round4(x: number): number {
  return Math.round(x * 10000) / 10000;
}

interface Doc {
  i: number;
  id: string;
  s: string;
  len: number;
  b?: number;
  short: number;
  at?: number;
  n?: number;
}

/** One unit's signing: batches to the pool, results written in order. */
class UnitSigner implements UnitCollector {
  private batch: DocRecord[] = [];
  private chars = 0;
  private readonly pending: { docs: DocRecord[]; result: Promise<BatchResult> }[] = [];
  private j = 0;
  private textBytes = 0;
  private readonly buffers: number[][];

  constructor(
    private readonly params: SignerParams,
    private readonly u: number,
    private readonly pool: SignerPool,
    private readonly out: CollectOutput,
    private readonly keepTexts: boolean,
  ) {
    this.buffers = Array.from({ length: out.partitions }, () => []);
  }

  async add(r: DocRecord): Promise<void> {
    this.batch.push(r);
    this.chars += r.text.length;
    if (this.batch.length >= BATCH_DOCS || this.chars >= BATCH_CHARS) await this.send(false);
  }

  private async send(drain: boolean): Promise<void> {
    if (this.batch.length > 0) {
      const result = this.pool.submit(this.batch.map((r) => r.text));
      result.catch(() => undefined); // awaited in order below
      this.pending.push({ docs: this.batch, result });
      this.batch = [];
      this.chars = 0;
    }
    while (this.pending.length > (drain ? 0 : Math.max(2, 2 * this.pool.threads))) {
      const { docs, result } = this.pending.shift()!;
      await this.apply(docs, await result);
    }
  }

  private async apply(docs: DocRecord[], res: BatchResult): Promise<void> {
    const { bands } = this.params;
    const parts = this.out.partitions;
    await this.out.own("sig.bin").write(new Uint8Array(res.signatures.buffer, res.signatures.byteOffset, res.signatures.byteLength));
    let lines = "";
    for (let i = 0; i < res.count; i++) {
      const r = docs[i];
      // b: the text's UTF-8 length, by which the overlap figures check a signature before they take it (src/analysis/dedup-signatures.ts).
      // With confirm: exact the text's bytes are kept too, and encoded once for both.
      const bytes = this.keepTexts ? Buffer.from(r.text, "utf8") : undefined;
      const doc: Doc = { i: r.seq, id: r.id, s: r.source, len: r.text.length, b: bytes ? bytes.length : Buffer.byteLength(r.text, "utf8"), short: res.short[i] };
      if (bytes) {
        doc.at = this.textBytes;
        doc.n = bytes.length;
        this.textBytes += bytes.length;
        await this.out.own("texts.bin").write(bytes);
      }
      lines += JSON.stringify(doc) + "\n";
      for (let t = 0; t < bands; t++) {
        const key = res.bandKeys[i * bands + t];
        this.buffers[key % parts].push(key, t, this.u, this.j);
      }
      this.j++;
    }
    await this.out.own("docs.jsonl").write(lines);
    for (let p = 0; p < parts; p++) if (this.buffers[p].length >= 1 << 16) await this.flush(p);
  }

  private async flush(p: number): Promise<void> {
    const buf = this.buffers[p];
    if (buf.length === 0) return;
    await this.out.part("buckets.bin", p).write(new Uint8Array(Uint32Array.from(buf).buffer));
    buf.length = 0;
  }

  async finish(): Promise<void> {
    await this.send(true);
    for (let p = 0; p < this.out.partitions; p++) await this.flush(p);
  }
}

/** Where each unit's documents start in the numbering across units, from the signature files' sizes. */
async function docOffsets(files: KeyedFiles, k: number): Promise<{ offset: Float64Array; total: number }> {
  const offset = new Float64Array(files.units + 1);
  for (let u = 0; u < files.units; u++) offset[u + 1] = offset[u] + (await files.size("sig.bin", u)) / (4 * k);
  const total = offset[files.units];
  if (total > MAX_DOCUMENTS) throw new SiftpackError("SP_STAGE", `dedup (minhash): more than ${MAX_DOCUMENTS} records reach this stage; split the input into several builds`);
  return { offset, total };
}

/** The unit of document d and its place in the unit. */
function locate(offset: Float64Array, d: number): { u: number; j: number } {
  let lo = 0;
  let hi = offset.length - 2;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (offset[mid] <= d) lo = mid;
    else hi = mid - 1;
  }
  return { u: lo, j: d - offset[lo] };
}

/** Signature rows of documents numbered across units. */
class Signatures {
  private readonly own: OwnFileReader;
  constructor(
    files: KeyedFiles,
    private readonly offset: Float64Array,
    readonly k: number,
  ) {
    this.own = new OwnFileReader(files, "sig.bin");
  }
  row(d: number, into: Uint32Array): Uint32Array {
    const { u, j } = locate(this.offset, d);
    this.own.read(u, j * this.k * 4, new Uint8Array(into.buffer, into.byteOffset, into.byteLength));
    return into;
  }
  close(): void {
    this.own.close();
  }
}

/**
 * Every document's entry in docs.jsonl, numbered across units; with `wanted`, only the entries of
 * the documents it marks are parsed (the others stay undefined): the clusters step needs a few
 * percent of them, and parsing every line was most of its time.
 */
async function loadDocs(files: KeyedFiles, total: number, wanted?: Uint8Array): Promise<{ docs: Doc[]; unitOf: Int32Array }> {
  const docs: Doc[] = new Array(total);
  const unitOf = new Int32Array(total);
  let d = 0;
  for (let u = 0; u < files.units; u++) {
    for await (const line of files.lines("docs.jsonl", u)) {
      unitOf[d] = u;
      if (!wanted || wanted[d] === 1) docs[d] = JSON.parse(line) as Doc;
      d++;
    }
  }
  return { docs, unitOf };
}

/** Exact Jaccard of two documents' shingle sets, from the texts kept by the collectors, with a small cache of sets. */
function exactJaccard(o: MinhashOptions, seed: number, files: KeyedFiles, docs: Doc[], unitOf: Int32Array): { of(a: number, b: number): number; close(): void } {
  const shingler = new Shingler({ kind: o.shingle, ngram: o.ngram, lowercase: o.lowercase }, seed);
  const texts = new OwnFileReader(files, "texts.bin");
  const cache = new Map<number, Uint32Array>();
  const set = (d: number) => {
    let s = cache.get(d);
    if (s) {
      cache.delete(d);
      cache.set(d, s);
      return s;
    }
    const doc = docs[d];
    const text = Buffer.from(texts.read(unitOf[d], doc.at!, new Uint8Array(doc.n!))).toString("utf8");
    s = shingleSet(shingler, text);
    cache.set(d, s);
    if (cache.size > SET_CACHE) cache.delete(cache.keys().next().value!);
    return s;
  };
  return { of: (a, b) => jaccard(set(a), set(b)), close: () => texts.close() };
}

export const minhashForm: KeyedForm<MinhashOptions> = {
  kind: "keyed",
  steps: { partition: "buckets", resolve: "clusters" },
  async collectors(o, env) {
    const params = signerParams(o, env.seed);
    // workers: 0 follows the run's threads; one thread signs in the calling thread.
    const threads = o.workers === 0 ? env.threads : o.workers;
    const pool = new SignerPool(params, threads > 1 ? threads : 0);
    return {
      unit: async (u, out) => new UnitSigner(params, u, pool, out, o.confirm === "exact"),
      close: async () => {
        await pool.close();
        env.log.debug({ stage: "dedup", step: "sign", signing_threads: pool.threads }, "records signed");
      },
    };
  },
  async partition(o, p, files, out, ctx) {
    const k = o.permutations;
    const { offset, total } = await docOffsets(files, k);
    const sigs = new Signatures(files, offset, k);
    const exact = o.confirm === "exact" ? await loadDocs(files, total).then(({ docs, unitOf }) => ({ docs, j: exactJaccard(o, ctx.seed, files, docs, unitOf) })) : undefined;
    const a = new Uint32Array(k);
    const b = new Uint32Array(k);
    const buckets = new BandBuckets(o.memory_mb * 2 ** 20 * 0.5, ctx.tmpDir);
    try {
      for (let u = 0; u < files.units; u++) {
        const raw = await files.read("buckets.bin", u, p);
        const w = new Uint32Array(raw.buffer, raw.byteOffset, raw.byteLength / 4);
        for (let x = 0; x < w.length; x += 4) buckets.add(w[x], w[x + 1], offset[w[x + 2]] + w[x + 3]);
      }
      const uf = new UnionFind(total);
      const edges: number[] = [];
      const similar = (d: number, e: number) => {
        const yes = exact && !exact.docs[d].short && !exact.docs[e].short ? exact.j.of(d, e) >= o.threshold : estimateJaccard(sigs.row(d, a), 0, sigs.row(e, b), 0, k) >= o.threshold;
        if (yes) edges.push(d, e);
        return yes;
      };
      let compared = 0;
      for (const group of buckets.groups()) compared += joinBucket(group, uf, similar);
      await out.share("edges.bin", new Uint8Array(Uint32Array.from(edges).buffer));
      // The resolve step reports these (summed over partitions) with the clusters.
      await out.share("stats.json", JSON.stringify({ comparisons: compared, pairs: edges.length / 2, spilled_bucket_runs: buckets.spilledRuns }));
    } finally {
      buckets.close();
      sigs.close();
      exact?.j.close();
    }
  },
  async resolve(o, files, out, ctx) {
    const k = o.permutations;
    const { offset, total: n } = await docOffsets(files, k);
    const uf = new UnionFind(n);
    const stats = { comparisons: 0, pairs: 0, spilled_bucket_runs: 0 };
    for (let p = 0; p < files.partitions; p++) {
      const s = JSON.parse((await files.shared("stats.json", p)).toString("utf8") || "{}") as Partial<typeof stats>;
      for (const k of Object.keys(stats) as (keyof typeof stats)[]) stats[k] += s[k] ?? 0;
      const raw = await files.shared("edges.bin", p);
      const w = new Uint32Array(raw.buffer, raw.byteOffset, raw.byteLength / 4);
      for (let x = 0; x < w.length; x += 2) uf.union(w[x], w[x + 1]);
    }
    // Only the members of clusters are looked at below (a document alone keeps itself and is not reported).
    const size = clusterSizes(uf);
    const member = new Uint8Array(n);
    for (let d = 0; d < n; d++) member[d] = size[uf.find(d)] > 1 ? 1 : 0;
    const { docs, unitOf } = await loadDocs(files, n, member);
    const list = o.sources ?? [];
    const length = Int32Array.from(docs, (d) => d?.len ?? 0);
    const rank = Int32Array.from(docs, (d) => (d === undefined || list.indexOf(d.s) < 0 ? list.length : list.indexOf(d.s)));
    const kept = chooseKept(uf, o.keep, length, rank, size);
    const sigs = new Signatures(files, offset, k);
    const exact = o.confirm === "exact" ? exactJaccard(o, ctx.seed, files, docs, unitOf) : undefined;
    const a = new Uint32Array(k);
    const b = new Uint32Array(k);
    const similarity = new Float32Array(n);
    try {
      for (let d = 0; d < n; d++) {
        const c = kept.keptOf[d];
        if (c >= 0) similarity[d] = c === d ? 1 : estimateJaccard(sigs.row(d, a), 0, sigs.row(c, b), 0, k);
      }
      const clusterId = (d: number) => `${docs[d].s}/${docs[d].id}`;
      writeClusters(out.buildFile("clusters.jsonl"), uf, kept.keptOf, {
        clusterId,
        source: (d) => docs[d].s,
        id: (d) => docs[d].id,
        similarity: (d) => similarity[d],
        jaccard: exact ? (d) => (kept.keptOf[d] === d || docs[d].short ? 1 : exact.of(d, kept.keptOf[d])) : undefined,
        short: (d) => docs[d].short === 1,
      });
      for (let d = 0; d < n; d++) {
        const c = kept.keptOf[d];
        if (c < 0 || (c === d && o.action !== "mark")) continue;
        out.decide(unitOf[d], docs[d].i, o.action === "mark" ? { cluster: clusterId(c) } : { of: docs[c].id, of_source: docs[c].s, similarity: round4(similarity[d]) });
      }
    } finally {
      sigs.close();
      exact?.close();
    }
    ctx.count("dedup:near-duplicate-clusters", kept.clusters);
    ctx.count(o.action === "mark" ? "dedup:near-duplicates-marked" : "dedup:near-duplicates-dropped", kept.duplicates);
    const { bands, rows } = resolveBands(o);
    ctx.log.info({ stage: "dedup", method: "minhash", records: n, bands, rows, clusters: kept.clusters, near_duplicates: kept.duplicates, action: o.action, ...stats }, "near-duplicate clusters found");
  },
  async applier(o) {
    return (r, d, ctx) => {
      if (d === undefined) return r;
      if (o.action === "mark") {
        r.cluster = (d as { cluster: string }).cluster;
        return r;
      }
      ctx.drop(r, "near-duplicate", d as Record<string, unknown>);
      return undefined;
    };
  },
};
