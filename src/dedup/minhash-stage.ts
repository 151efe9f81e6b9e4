// The MinHash dedup stage in two passes: sign and bucket every record, then cluster, write clusters.jsonl and emit.
import { existsSync, mkdtempSync, rmSync } from "node:fs";
import { availableParallelism } from "node:os";
import { join } from "node:path";
import { BandBuckets, MAX_DOCUMENTS } from "./buckets.js";
import { chooseKept, joinBucket } from "./clusters.js";
import { writeClusters } from "./cluster-file.js";
import { int32s } from "../lib/grow.js";
import { resolveBands } from "./lsh-params.js";
import type { MinhashOptions } from "./options.js";
import { SignerPool } from "./pool.js";
import { RecordStore } from "./record-store.js";
import { SignatureStore } from "./signature-store.js";
import type { BatchResult, SignerParams } from "./signer.js";
import { estimateJaccard } from "./signature.js";
import { jaccard, shingleSet, Shingler } from "./shingles.js";
import { UnionFind } from "./union-find.js";
import { SiftpackError } from "../errors.js";
import type { Stage } from "../stages/stage.js";
import type { DocRecord, StageContext } from "../types.js";

/** Texts per batch sent to a signing thread, and the text size that closes a batch early. */
const BATCH_DOCS = 256;
const BATCH_CHARS = 1 << 20;
/** Exact-Jaccard checks keep recently used shingle sets; a bucket's members are checked against its first ones, so reuse is high. */
const SET_CACHE = 4096;

/** Whole-stage budget split: records wait for pass 2 in half of it; signatures and bucket entries get a quarter each. */
const SHARE = { records: 0.5, signatures: 0.25, buckets: 0.25 };

export function signerParams(o: MinhashOptions, seed: number): SignerParams {
  const { bands, rows } = resolveBands(o);
  return { shingle: { kind: o.shingle, ngram: o.ngram, lowercase: o.lowercase }, permutations: o.permutations, bands, rows, seed };
}

/** The first free name of clusters.jsonl, clusters-2.jsonl, … (a pipeline may run MinHash dedup more than once). */
function clustersName(workDir: string): string {
  for (let i = 1; ; i++) {
    const name = i === 1 ? "clusters.jsonl" : `clusters-${i}.jsonl`;
    if (!existsSync(join(workDir, name))) return name;
  }
}

export function createMinhashStage(o: MinhashOptions): Stage {
  return async function* dedupMinhash(input: AsyncIterable<DocRecord>, ctx: StageContext) {
    const params = signerParams(o, ctx.seed);
    const k = params.permutations;
    const budget = o.memory_mb * 2 ** 20;
    const tmp = mkdtempSync(join(ctx.workDir, ".dedup-"));
    const records = new RecordStore(budget * SHARE.records, tmp);
    const signatures = new SignatureStore(k, budget * SHARE.signatures, tmp);
    const buckets = new BandBuckets(budget * SHARE.buckets, tmp);
    const threads = o.workers === 0 ? availableParallelism() : o.workers === 1 ? 0 : o.workers;
    const pool = new SignerPool(params, threads);
    try {
      // Pass 1: every record is stored, signed (in batches, maybe on other threads) and bucketed.
      const ids: string[] = [];
      const sourceNames: string[] = [];
      const sourceIndex = new Map<string, number>();
      const source = int32s();
      const length = int32s();
      const short = int32s();
      const pending: Promise<BatchResult>[] = [];
      const maxPending = Math.max(2, 2 * pool.threads);
      let batch: string[] = [];
      let batchChars = 0;
      let applied = 0;
      const apply = (res: BatchResult) => {
        signatures.append(res.signatures, res.count);
        for (let i = 0; i < res.count; i++) {
          const d = applied + i;
          for (let t = 0; t < params.bands; t++) buckets.add(res.bandKeys[i * params.bands + t], t, d);
          short.push(res.short[i]);
        }
        applied += res.count;
      };
      const send = async (drain: boolean) => {
        if (batch.length > 0) {
          const p = pool.submit(batch);
          p.catch(() => undefined); // awaited in order below; this only keeps an early failure from counting as unhandled
          pending.push(p);
          batch = [];
          batchChars = 0;
        }
        while (pending.length > (drain ? 0 : maxPending)) apply(await pending.shift()!);
      };
      for await (const r of input) {
        if (ids.length >= MAX_DOCUMENTS)
          throw new SiftpackError("SP_STAGE", `dedup (minhash): more than ${MAX_DOCUMENTS} records reach this stage; split the input into several builds`);
        ids.push(r.id);
        let s = sourceIndex.get(r.source);
        if (s === undefined) {
          sourceIndex.set(r.source, (s = sourceNames.length));
          sourceNames.push(r.source);
        }
        source.push(s);
        length.push(r.text.length);
        records.add(r);
        batch.push(r.text);
        batchChars += r.text.length;
        if (batch.length >= BATCH_DOCS || batchChars >= BATCH_CHARS) await send(false);
      }
      await send(true);
      await pool.close();
      const n = ids.length;

      // Candidates: documents sharing a band bucket, confirmed by the signature or exactly, then joined.
      const uf = new UnionFind(n);
      const scratchA = new Uint32Array(k);
      const scratchB = new Uint32Array(k);
      const shortOf = short.view();
      const estimate = (a: number, b: number) => estimateJaccard(signatures.row(a, scratchA), 0, signatures.row(b, scratchB), 0, k);
      const exact = o.confirm === "exact" ? exactJaccard(o, ctx.seed, records) : undefined;
      const similar = (a: number, b: number) =>
        exact && !shortOf[a] && !shortOf[b] ? exact(a, b) >= o.threshold : estimate(a, b) >= o.threshold;
      let compared = 0;
      let sharedBuckets = 0;
      for (const group of buckets.groups()) {
        sharedBuckets++;
        compared += joinBucket(group, uf, similar);
      }
      const spilledRuns = buckets.spilledRuns;
      buckets.close();

      // One record kept per cluster; clusters.jsonl lists them all.
      const rankOf = sourceRanks(o, sourceNames);
      const srcView = source.view();
      const rank = new Int32Array(n);
      for (let d = 0; d < n; d++) rank[d] = rankOf[srcView[d]];
      const kept = chooseKept(uf, o.keep, length.view(), rank);
      const similarity = new Float32Array(n);
      for (let d = 0; d < n; d++) {
        const c = kept.keptOf[d];
        if (c >= 0) similarity[d] = c === d ? 1 : estimate(d, c);
      }
      const clusterId = (d: number) => `${sourceNames[srcView[d]]}/${ids[d]}`;
      const fileName = clustersName(ctx.workDir);
      writeClusters(join(ctx.workDir, fileName), uf, kept.keptOf, {
        clusterId,
        source: (d) => sourceNames[srcView[d]],
        id: (d) => ids[d],
        similarity: (d) => similarity[d],
        jaccard: exact ? (d) => (kept.keptOf[d] === d || shortOf[d] ? 1 : exact(d, kept.keptOf[d])) : undefined,
        short: (d) => shortOf[d] === 1,
      });
      ctx.addOutputFile(fileName);
      ctx.count("dedup:near-duplicate-clusters", kept.clusters);
      ctx.count(o.action === "mark" ? "dedup:near-duplicates-marked" : "dedup:near-duplicates-dropped", kept.duplicates);
      ctx.log.info(
        {
          stage: "dedup",
          method: "minhash",
          records: n,
          bands: params.bands,
          rows: params.rows,
          buckets_shared: sharedBuckets,
          comparisons: compared,
          clusters: kept.clusters,
          near_duplicates: kept.duplicates,
          action: o.action,
          spilled: { records: records.spilledRecords, signatures: signatures.spilledRows, bucket_runs: spilledRuns },
          signing_threads: pool.threads,
        },
        "near-duplicate clusters found",
      );
      signatures.close();
      rmSync(join(tmp, "signatures.bin"), { force: true });
      rmSync(join(tmp, "buckets.bin"), { force: true });

      // Pass 2: records in input order; near-duplicates dropped (or all tagged with their cluster).
      let d = 0;
      for (const r of records.all()) {
        const c = kept.keptOf[d];
        if (c < 0) yield r;
        else if (o.action === "mark") {
          r.cluster = clusterId(c);
          yield r;
        } else if (c === d) yield r;
        else ctx.drop(r, "near-duplicate", { of: ids[c], of_source: sourceNames[srcView[c]], similarity: round4(similarity[d]) });
        d++;
      }
    } finally {
      await pool.close();
      records.close();
      signatures.close();
      buckets.close();
      rmSync(tmp, { recursive: true, force: true });
    }
  };
}

export function round4(x: number): number {
  return Math.round(x * 10000) / 10000;
}

/** Priority rank per source index: position in `sources`, unlisted sources after all listed ones. */
function sourceRanks(o: MinhashOptions, names: string[]): Int32Array {
  const list = o.sources ?? [];
  return Int32Array.from(names, (name) => {
    const i = list.indexOf(name);
    return i < 0 ? list.length : i;
  });
}

/** Exact Jaccard of two documents' shingle sets, recomputed from the stored text, with a small cache of sets. */
function exactJaccard(o: MinhashOptions, seed: number, records: RecordStore): (a: number, b: number) => number {
  const shingler = new Shingler({ kind: o.shingle, ngram: o.ngram, lowercase: o.lowercase }, seed);
  const cache = new Map<number, Uint32Array>();
  const set = (d: number) => {
    let s = cache.get(d);
    if (s) {
      cache.delete(d);
      cache.set(d, s);
      return s;
    }
    s = shingleSet(shingler, records.get(d).text);
    cache.set(d, s);
    if (cache.size > SET_CACHE) cache.delete(cache.keys().next().value!);
    return s;
  };
  return (a, b) => jaccard(set(a), set(b));
}
