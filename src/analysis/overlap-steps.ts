// The overlap figures between splits ("overlap" in manifest.json) as analysis steps, with the
// definitions and shape of the one-pass counter (src/overlap/split-overlap.ts), in work that never
// grows with the whole corpus in one task.
//
// Collect (per packing group, in the group's output order): each document's words are cut, its word
// n-grams and text hashed and, when near-duplicates are counted, its MinHash signature made (in
// batches, on worker threads when the task has several). Every n-gram key and salted text
// fingerprint goes to the partition of its key: a train document's keys go there bare (grouped by
// partition on the hashing thread; only presence matters), a held-out document's keys go there
// tagged with its split and its number within the split, because the figures count per held-out
// position and per held-out document. Every band key of a signature goes to the partition of that
// key likewise, and the signature itself (with its band keys) to the group's own file.
//
// Partition p: holds the held-out keys of p in memory (held-out splits are the small ones), streams
// train's keys of p past them, and decides for each held-out position whether the reference split of
// each pair has its key: train's keys by membership, another held-out split's through the tagged
// keys. It shares, per pair, how many positions were seen and how many texts were exact duplicates
// (sums), and the held-out documents with a seen n-gram (a sorted list: a document's positions spread
// over partitions, so `figures` takes the union). For near-duplicates it joins the band buckets of
// p: a (reference, held-out) document pair sharing a bucket of band t is confirmed here by signature
// only when t is the first band the two share, so every pair is counted in exactly one partition;
// it shares the confirmed pairs' count and held-out documents. It also counts train's distinct keys
// in p (partitions hold disjoint keys, so the sum is train's number of distinct keys).
//
// Figures: sums, unions of the document lists, and the groups' unigram counts merged.
//
// Membership in train is exact now. The one-pass counter held train's keys in one set that became a
// Bloom filter beyond 4 Mi keys; here no task holds train's keys, so nothing needs to approximate,
// and `train_set` is always { kind: "exact", keys }, keys being train's distinct n-grams and texts
// as before. The other figures are the one-pass counter's whenever its set stayed exact.
//
// Files of group g (own): meta.json (per split: documents, short documents, n-gram positions, unigram
// tokens and ids), unigram.bin (Float64 counts per split), sig.bin (per document: bands band keys,
// then k signature values, uint32). Per partition: ng-train (64-bit keys, in runs sorted and
// without repeats, one per flush of the group's buffer), ng-held (hi, lo, split code | TEXT_FLAG,
// number in split: 4 × uint32), bands-train (key, band, row: 3 × uint32), bands-held (key, band,
// row, split code, number in split: 5 × uint32). Numbers are in this
// machine's byte order: every task of a build runs on the same kind of machine.
// Shared by partition p: overlap.json (counts) and docs.bin (the document lists, uint32).
import { closeSync, openSync, readSync } from "node:fs";
import type { AnalysisContext, AnalysisSteps } from "./steps.js";
import { OwnFileReader, type CollectOutput, type KeyedFiles, type UnitCollector } from "../stages/keyed.js";
import type { DocRecord } from "../types.js";
import type { WorkerPool } from "../parallel/pool.js";
import { estimateJaccard } from "../dedup/signature.js";
import { uint32s, type Grow } from "../lib/grow.js";
import { loadHasher } from "../lib/hash.js";
import { UnigramCounts } from "../overlap/divergence.js";
import { HashMap64 } from "../overlap/hash-map64.js";
import { heldOutPairs, nearDupDescription, ngramCounts, pairFigures, splitOrder, wordsDescription, type NearDupSettings, type OverlapFigures } from "../overlap/figures.js";
import type { WordForm } from "../overlap/words.js";
import { DISTINCT_BUDGET, DistinctKeys, mergeFind, sortUnique } from "./distinct-keys.js";
import { bySpill, numberKeys } from "./held-keys.js";
import { hashPool, keyPartition, TextBatch, type HashedBatch, type HashParams, type HashRequest } from "./overlap-hash.js";
import { nearDupOf, overlapApplies, vocabSizeOf } from "./overlap-settings.js";
import { givenSignature } from "./dedup-signatures.js";

/** Texts per hashing batch, and the text size that closes a batch early. */
const BATCH_DOCS = 1024;
const BATCH_CHARS = 1 << 22;
/**
 * Buffer sizes. Numbers buffered across the partition files (a file is written when it holds its share,
 * so memory does not grow with the number of partitions); train's key halves likewise, in a larger
 * buffer (32 MiB: a default packing group's keys fit it, so each of its partition files is one
 * sorted run); words per read of a partition file (8 MiB); held-out signature rows kept while
 * joining buckets (a bucket's members are met again and again); train keys a partition step counts
 * in memory before it spills (distinct-keys.ts). Tests shrink them to exercise every flush, spill
 * and chunk boundary on small inputs.
 */
export const overlapLimits = { partFlush: 1 << 20, trainFlush: 1 << 23, readWords: 1 << 21, rowCache: 4096, distinctBudget: DISTINCT_BUDGET };
/** Marks a held-out text fingerprint among its n-gram keys. */
const TEXT_FLAG = 0x80000000;

/** The words' Unicode form, as the one-pass analyzer and `decontaminate` use. */
const FORM: WordForm = "NFKC";

interface SplitMeta {
  name: string;
  documents: number;
  /** Documents with fewer words than n. */
  short: number;
  /** N-gram positions. */
  ngrams: number;
  /** Unigram tokens, one more than the largest id, and where the counts start in unigram.bin (in Float64s). */
  tokens: number;
  ids: number;
  at: number;
}

interface GroupMeta {
  /** By split code: the order in which the group first met each split. */
  splits: SplitMeta[];
  /** Documents, i.e. rows of sig.bin. */
  rows: number;
}

/** One group's collector: hashing in batches (in order), keys into partition files. */
class GroupCollector implements UnitCollector {
  private readonly codes = new Map<string, number>();
  private readonly splits: { meta: SplitMeta; unigram: UnigramCounts; train: boolean }[] = [];
  private items: { code: number; n: number }[] = [];
  private texts = new TextBatch();
  private chars = 0;
  private readonly pending: { items: { code: number; n: number }[]; result: Promise<HashedBatch> }[] = [];
  private rows = 0;
  /** Train's keys by partition (64-bit keys, repeats kept until a flush sorts them and drops repeats). */
  private readonly train: Grow<Uint32Array>[];
  private readonly held: number[][];
  private readonly bandsTrain: number[][];
  private readonly bandsHeld: number[][];

  constructor(
    private readonly nearDup: NearDupSettings | undefined,
    private readonly pool: WorkerPool<HashRequest, HashedBatch>,
    private readonly out: CollectOutput,
  ) {
    const parts = () => Array.from({ length: out.partitions }, () => [] as number[]);
    this.train = Array.from({ length: out.partitions }, () => uint32s());
    this.held = parts();
    this.bandsTrain = parts();
    this.bandsHeld = parts();
  }

  async add(r: DocRecord): Promise<void> {
    const split = r.split ?? "train";
    let code = this.codes.get(split);
    if (code === undefined) {
      code = this.splits.length;
      this.codes.set(split, code);
      this.splits.push({ meta: { name: split, documents: 0, short: 0, ngrams: 0, tokens: 0, ids: 0, at: 0 }, unigram: new UnigramCounts(0), train: split === "train" });
    }
    const s = this.splits[code];
    if (r.tokens) s.unigram.add(r.tokens);
    this.items.push({ code, n: s.meta.documents++ });
    // Bytes as they come from the unit file when the pack phase leaves them undecoded (what a batch holds anyway).
    // A signature the MinHash dedup stage made of this text, handed on by the pack phase (dedup-signatures.ts).
    const signature = this.nearDup ? givenSignature(r) : undefined;
    if (r.utf8) this.texts.addBytes(r.utf8, s.train, signature);
    else this.texts.add(r.text, s.train, signature);
    this.chars += r.utf8 ? r.utf8.length : r.text.length;
    if (this.items.length >= BATCH_DOCS || this.chars >= BATCH_CHARS) await this.send(false);
  }

  private async send(drain: boolean): Promise<void> {
    if (this.items.length > 0) {
      const result = this.pool.submit(this.texts.take(this.out.partitions));
      result.catch(() => undefined); // awaited in order below
      this.pending.push({ items: this.items, result });
      this.items = [];
      this.chars = 0;
    }
    while (this.pending.length > (drain ? 0 : Math.max(2, 2 * this.pool.threads))) {
      const { items, result } = this.pending.shift()!;
      await this.apply(items, await result);
    }
  }

  private async apply(items: { code: number; n: number }[], res: HashedBatch): Promise<void> {
    const P = this.out.partitions;
    const nd = this.nearDup?.signer;
    const k = nd?.permutations ?? 0;
    const bands = nd?.bands ?? 0;
    const rowWords = k + bands;
    const sigRows = nd ? new Uint32Array(res.count * rowWords) : undefined;
    let at = 0;
    for (let i = 0; i < res.count; i++) {
      const { code, n } = items[i];
      const s = this.splits[code];
      const ngrams = res.ngrams[i];
      if (ngrams === 0) s.meta.short++;
      s.meta.ngrams += ngrams;
      if (!s.train) {
        for (let x = at; x < at + ngrams; x++) this.held[keyPartition(res.hi[x], P)].push(res.hi[x], res.lo[x], code, n);
        at += ngrams;
        this.held[keyPartition(res.textHi[i], P)].push(res.textHi[i], res.textLo[i], (code | TEXT_FLAG) >>> 0, n);
      }
      if (sigRows) {
        sigRows.set(res.bandKeys!.subarray(i * bands, (i + 1) * bands), i * rowWords);
        sigRows.set(res.signatures!.subarray(i * k, (i + 1) * k), i * rowWords + bands);
        for (let t = 0; t < bands; t++) {
          const key = res.bandKeys![i * bands + t];
          if (s.train) this.bandsTrain[key % P].push(key, t, this.rows);
          else this.bandsHeld[key % P].push(key, t, this.rows, code, n);
        }
      }
      this.rows++;
    }
    if (sigRows) await this.out.own("sig.bin").write(new Uint8Array(sigRows.buffer));
    // Train's keys come grouped by partition.
    for (let p = 0; p < P; p++) this.train[p].append(res.trainKeys.subarray(2 * res.trainStarts[p], 2 * res.trainStarts[p + 1]));
    for (let p = 0; p < P; p++) await this.flushParts(p, false);
  }

  private async flushParts(p: number, all: boolean): Promise<void> {
    const share = Math.max(1, Math.floor(overlapLimits.partFlush / this.out.partitions));
    const t = this.train[p];
    if (t.length > 0 && (all || t.length >= Math.max(2, Math.floor(overlapLimits.trainFlush / this.out.partitions)))) {
      // Sorted and each key once: a group's text repeats its n-grams (about 4 in 10 here), and the
      // partition step's sort is several times faster on runs already in order. A copy: the stream
      // holds what it is given until written, and the column is reused.
      await this.out.part("ng-train", p).write(new Uint8Array(sortUnique(t.view()).slice().buffer));
      t.length = 0;
    }
    for (const [name, list] of [
      ["ng-held", this.held],
      ["bands-train", this.bandsTrain],
      ["bands-held", this.bandsHeld],
    ] as const) {
      const buf = list[p];
      if (buf.length === 0 || (!all && buf.length < share)) continue;
      await this.out.part(name, p).write(new Uint8Array(Uint32Array.from(buf).buffer));
      buf.length = 0;
    }
  }

  async finish(): Promise<void> {
    await this.send(true);
    for (let p = 0; p < this.out.partitions; p++) await this.flushParts(p, true);
    // A group without records writes nothing: its files read as empty.
    if (this.splits.length === 0) return;
    let at = 0;
    const parts: Float64Array[] = [];
    for (const s of this.splits) {
      s.meta.tokens = s.unigram.total;
      s.meta.ids = s.unigram.ids;
      s.meta.at = at;
      parts.push(s.unigram.counts.subarray(0, s.unigram.ids));
      at += s.unigram.ids;
    }
    const counts = new Float64Array(at);
    for (let i = 0, o = 0; i < parts.length; o += parts[i].length, i++) counts.set(parts[i], o);
    await this.out.own("unigram.bin").write(new Uint8Array(counts.buffer));
    const meta: GroupMeta = { splits: this.splits.map((s) => s.meta), rows: this.rows };
    await this.out.own("meta.json").write(JSON.stringify(meta));
  }
}

/** The splits of the whole build and where each group's held-out documents start in their split's numbering. */
interface Setup {
  metas: (GroupMeta | undefined)[];
  /** Splits with documents, in split order; the held-out ones among them (index = held-out number). */
  order: string[];
  held: string[];
  pairs: [string, string][];
  /** Per pair: the reference's held-out number (−1: train) and the held-out split's. */
  pairRef: Int32Array;
  pairHeld: Int32Array;
  /** Pairs whose held-out split is h. */
  pairsOf: number[][];
  /** The pair of (reference a, held-out b), by held-out numbers (a = −1: train), or −1. */
  pairAt(a: number, b: number): number;
  /** Per group: split code → held-out number (−1: train). */
  heldOf: Int32Array[];
  /** Per group: held-out number → the number of its first document of that split in the build. */
  base: Float64Array[];
  /** Documents, short documents and n-gram positions per held-out split. */
  documents: Float64Array;
  short: Float64Array;
  ngrams: Float64Array;
}

/** f(g) for every unit (piece) g, started together: a step reads one small file or more of each, and waits on them at once. */
function perUnit<T>(files: KeyedFiles, f: (g: number) => Promise<T>): Promise<T[]> {
  return Promise.all(Array.from({ length: files.units }, (_, g) => f(g)));
}

async function loadSetup(files: KeyedFiles): Promise<Setup> {
  const metas: (GroupMeta | undefined)[] = [];
  const names = new Set<string>();
  const raws = await perUnit(files, (g) => files.read("meta.json", g));
  for (let g = 0; g < files.units; g++) {
    const raw = raws[g].toString("utf8");
    const m = raw ? (JSON.parse(raw) as GroupMeta) : undefined;
    metas.push(m);
    for (const s of m?.splits ?? []) names.add(s.name);
  }
  const order = splitOrder(names);
  const held = order.filter((s) => s !== "train");
  const H = held.length;
  const heldIndex = new Map(held.map((s, i) => [s, i]));
  const pairs = heldOutPairs(order);
  const pairRef = Int32Array.from(pairs, ([a]) => (a === "train" ? -1 : heldIndex.get(a)!));
  const pairHeld = Int32Array.from(pairs, ([, b]) => heldIndex.get(b)!);
  const table = new Int32Array((H + 1) * H).fill(-1);
  pairs.forEach((_, i) => (table[(pairRef[i] + 1) * H + pairHeld[i]] = i));
  const pairsOf = held.map((_, h) => pairs.map((_, i) => i).filter((i) => pairHeld[i] === h));
  const documents = new Float64Array(H);
  const short = new Float64Array(H);
  const ngrams = new Float64Array(H);
  const heldOf: Int32Array[] = [];
  const base: Float64Array[] = [];
  for (const m of metas) {
    const codes = Int32Array.from(m?.splits ?? [], (s) => (s.name === "train" ? -1 : heldIndex.get(s.name)!));
    heldOf.push(codes);
    base.push(documents.slice());
    (m?.splits ?? []).forEach((s, c) => {
      const h = codes[c];
      if (h < 0) return;
      documents[h] += s.documents;
      short[h] += s.short;
      ngrams[h] += s.ngrams;
    });
  }
  return { metas, order, held, pairs, pairRef, pairHeld, pairsOf, pairAt: (a, b) => table[(a + 1) * H + b], heldOf, base, documents, short, ngrams };
}

/** A Buffer's bytes as uint32s (copied when the Buffer does not start on a 4-byte boundary). */
function words(raw: Buffer): Uint32Array {
  if (raw.byteOffset % 4 === 0) return new Uint32Array(raw.buffer, raw.byteOffset, raw.byteLength >> 2);
  return new Uint32Array(new Uint8Array(raw).buffer);
}

/** Reads a (possibly large) partition file in chunks of whole entries of `entryWords` uint32s. */
function eachChunk(path: string, bytes: number, entryWords: number, each: (w: Uint32Array) => void): void {
  if (bytes === 0) return;
  const fd = openSync(path, "r");
  try {
    const chunk = new Uint32Array(Math.min(Math.max(1, Math.floor(overlapLimits.readWords / entryWords)) * entryWords, bytes >> 2));
    const b = new Uint8Array(chunk.buffer);
    for (let pos = 0; pos < bytes; ) {
      const want = Math.min(b.length, bytes - pos);
      let got = 0;
      while (got < want) {
        const n = readSync(fd, b, got, want - got, pos + got);
        if (n === 0) throw new Error(`overlap: ${path} ends early`);
        got += n;
      }
      pos += got;
      each(chunk.subarray(0, got >> 2));
    }
  } finally {
    closeSync(fd);
  }
}

/** Positioned reads of signature rows (band keys, then signature) from the groups' sig.bin. */
class SignatureRows {
  private readonly own: OwnFileReader;
  constructor(
    files: KeyedFiles,
    readonly rowWords: number,
  ) {
    this.own = new OwnFileReader(files, "sig.bin");
  }

  read(g: number, row: number, into: Uint32Array): Uint32Array {
    this.own.read(g, row * this.rowWords * 4, new Uint8Array(into.buffer, into.byteOffset, into.byteLength));
    return into;
  }

  close(): void {
    this.own.close();
  }
}

/** What one partition shares, per pair in `Setup.pairs` order. */
interface PartitionCounts {
  train_keys: number;
  pairs: { seen: number; exact: number; sharing: number; near_pairs: number; near_hits: number }[];
}

/** N-gram and text figures of partition p into `counts` and `sharing`; returns train's distinct keys in p. */
async function ngramPartition(files: KeyedFiles, p: number, s: Setup, tmpDir: string, counts: PartitionCounts, sharing: Grow<Uint32Array>[]): Promise<number> {
  const H = s.held.length;
  const held = await perUnit(files, (g) => files.read("ng-held", g, p));
  let n = 0;
  for (const raw of held) n += raw.byteLength / 16;
  // Held-out keys of p: distinct keys (numbered, held-keys.ts), and per key which held-out splits have it as an n-gram or as a text.
  const W = Math.max(1, Math.ceil(H / 32));
  const splitOf = new Int32Array(n);
  const isText = new Uint8Array(n);
  const docOf = new Float64Array(n);
  let e = 0;
  held.forEach((raw, g) => {
    const w = words(raw);
    for (let x = 0; x < w.length; x += 4, e++) {
      const code = w[x + 2];
      isText[e] = code >= TEXT_FLAG ? 1 : 0;
      splitOf[e] = s.heldOf[g][code % TEXT_FLAG];
      docOf[e] = s.base[g][splitOf[e]] + w[x + 3];
    }
  });
  const keys = numberKeys(held.map(words), 4);
  const { distinct, keyOf } = keys;
  held.length = 0;
  const gramMask = new Uint32Array(distinct * W);
  const textMask = new Uint32Array(distinct * W);
  for (let i = 0; i < n; i++) (isText[i] ? textMask : gramMask)[keyOf[i] * W + (splitOf[i] >> 5)] |= 1 << (splitOf[i] & 31);

  // Train's keys of p, counted; the held-out keys found among them as the counter sorts them (a
  // merge of two sorted lists: one hash lookup per train key would miss the caches at every key).
  const inTrain = new Uint8Array(distinct);
  const sizes = await perUnit(files, (g) => files.size("ng-train", g, p));
  const counter = new DistinctKeys(sizes.reduce((a, b) => a + b, 0) / 8, tmpDir, overlapLimits.distinctBudget);
  let trainKeys: number;
  try {
    for (let g = 0; g < files.units; g++) eachChunk(files.path("ng-train", g, p), sizes[g], 2, (w) => counter.add(w));
    const wanted = bySpill(keys, counter.spillFiles);
    trainKeys = counter.count((sorted, n, spill) => {
      const want = wanted[Math.max(0, spill)];
      mergeFind(sorted, n, want.sorted, (j) => (inTrain[want.numberOf[j]] = 1));
    });
  } finally {
    counter.close();
  }

  // Each held-out position against each reference split of its pairs. Entries come group by group,
  // document by document, so a document's entries are together and the lists come out sorted.
  const last = new Float64Array(s.pairs.length).fill(-1);
  for (let i = 0; i < n; i++) {
    const k = keyOf[i];
    const mask = isText[i] ? textMask : gramMask;
    for (const q of s.pairsOf[splitOf[i]]) {
      const a = s.pairRef[q];
      const seen = a < 0 ? inTrain[k] === 1 : ((mask[k * W + (a >> 5)] >>> (a & 31)) & 1) === 1;
      if (!seen) continue;
      const c = counts.pairs[q];
      if (isText[i]) c.exact++;
      else {
        c.seen++;
        if (last[q] !== docOf[i]) {
          sharing[q].push(docOf[i]);
          c.sharing++;
          last[q] = docOf[i];
        }
      }
    }
  }
  return trainKeys;
}

/**
 * Near-duplicate pairs among the band buckets of partition p. The held-out documents' entries are
 * held (grouped by bucket), train's streamed past them. A candidate pair sharing the bucket of band
 * t is confirmed here only when t is the first band their keys agree in: the bucket of an earlier
 * shared band, in whatever partition, counts it instead. So each pair is judged exactly once, as by
 * the one-pass counter, which checks each (reference document, held-out document) once.
 */
async function nearPartition(files: KeyedFiles, p: number, s: Setup, nd: NearDupSettings, counts: PartitionCounts, hits: Grow<Uint32Array>[]): Promise<void> {
  const k = nd.signer.permutations;
  const bands = nd.signer.bands;
  const rowWords = bands + k;
  const eGroup = uint32s();
  const eRow = uint32s();
  const eSplit = uint32s();
  const eDoc: number[] = [];
  const bandsHeld = await perUnit(files, (g) => files.read("bands-held", g, p));
  let n = 0;
  for (const raw of bandsHeld) n += raw.byteLength / 20;
  // Buckets (band, key), numbered in the order first met, each with its entries in order: a table of
  // numbers and two arrays (a Map keyed by band · 2³² + key boxed every key as a heap number).
  const bucketIds = new HashMap64(Math.max(16, n));
  const bucketOf = new Int32Array(n);
  const bandOf: number[] = [];
  for (let g = 0; g < files.units; g++) {
    const w = words(bandsHeld[g]);
    for (let x = 0; x < w.length; x += 5) {
      const e = eDoc.length;
      const h = s.heldOf[g][w[x + 3]];
      eGroup.push(g);
      eRow.push(w[x + 2]);
      eSplit.push(h);
      eDoc.push(s.base[g][h] + w[x + 4]);
      // The band as the high half: the same key in two bands is two buckets.
      const id = bucketIds.setIfAbsent(w[x + 1], w[x], bandOf.length);
      if (id === bandOf.length) bandOf.push(w[x + 1]);
      bucketOf[e] = id;
    }
  }
  const B = bandOf.length;
  if (B === 0) return;
  const start = new Int32Array(B + 1);
  for (let e = 0; e < n; e++) start[bucketOf[e] + 1]++;
  for (let b = 0; b < B; b++) start[b + 1] += start[b];
  const members = new Int32Array(n);
  const fill = start.slice(0, B);
  for (let e = 0; e < n; e++) members[fill[bucketOf[e]]++] = e;
  const rows = new SignatureRows(files, rowWords);
  const cache = new Map<number, Uint32Array>();
  const heldRow = (e: number) => {
    let r = cache.get(e);
    if (!r) {
      if (cache.size >= overlapLimits.rowCache) cache.delete(cache.keys().next().value!);
      cache.set(e, (r = rows.read(eGroup.get(e), eRow.get(e), new Uint32Array(rowWords))));
    }
    return r;
  };
  const confirmed = (a: Uint32Array, b: Uint32Array, t: number) => {
    for (let u = 0; u < t; u++) if (a[u] === b[u]) return false;
    return estimateJaccard(a, bands, b, bands, k) >= nd.threshold;
  };
  const count = (q: number, e: number) => {
    counts.pairs[q].near_pairs++;
    counts.pairs[q].near_hits++;
    hits[q].push(eDoc[e]);
  };
  try {
    const x = new Uint32Array(rowWords);
    const trainSizes = await perUnit(files, (g) => files.size("bands-train", g, p));
    for (let g = 0; g < files.units; g++)
      eachChunk(files.path("bands-train", g, p), trainSizes[g], 3, (w) => {
        for (let i = 0; i < w.length; i += 3) {
          const id = bucketIds.get(w[i + 1], w[i]);
          if (id < 0) continue;
          rows.read(g, w[i + 2], x);
          for (let m = start[id]; m < start[id + 1]; m++) {
            const e = members[m];
            const q = s.pairAt(-1, eSplit.get(e));
            if (q >= 0 && confirmed(x, heldRow(e), w[i + 1])) count(q, e);
          }
        }
      });
    // Held-out against held-out: the earlier split in split order is the reference. A bucket's
    // members are sorted by split first, so the work is that of the pairs across splits only.
    for (let b = 0; b < B; b++) {
      const list = members.subarray(start[b], start[b + 1]);
      if (list.length < 2) continue;
      const first = eSplit.get(list[0]);
      if (list.every((e) => eSplit.get(e) === first)) continue;
      const t = bandOf[b];
      const bySplit = new Map<number, number[]>();
      for (const e of list) {
        const h = eSplit.get(e);
        const l = bySplit.get(h);
        if (l) l.push(e);
        else bySplit.set(h, [e]);
      }
      for (const [sa, refs] of bySplit)
        for (const [sb, hos] of bySplit) {
          if (sa >= sb) continue;
          const q = s.pairAt(sa, sb);
          if (q < 0) continue;
          for (const r of refs) for (const e of hos) if (confirmed(heldRow(r), heldRow(e), t)) count(q, e);
        }
    }
  } finally {
    rows.close();
  }
}

/** What the steps take from the pipeline file. */
function settings(ctx: AnalysisContext): { ngram: number; nearDup: NearDupSettings | { unavailable: string } } {
  return { ngram: ctx.config.overlap.ngram, nearDup: nearDupOf(ctx.config) };
}

export const overlapSteps: AnalysisSteps = {
  key: "overlap",
  usesText: "utf8",
  applies: (ctx) => overlapApplies(ctx.config),

  async collectors(ctx, env) {
    await loadHasher();
    const { ngram, nearDup } = settings(ctx);
    const nd = "signer" in nearDup ? nearDup : undefined;
    const params: HashParams = { ngram, form: FORM, signer: nd?.signer };
    const pool = hashPool(params, env.threads);
    return {
      unit: async (_g, out) => new GroupCollector(nd, pool, out),
      close: async () => {
        await pool.close();
        env.log.debug({ analysis: "overlap", step: "collect", hashing_threads: pool.threads }, "records hashed");
      },
    };
  },

  async partition(ctx, p, files, out, step) {
    const { nearDup } = settings(ctx);
    const s = await loadSetup(files);
    const counts: PartitionCounts = { train_keys: 0, pairs: s.pairs.map(() => ({ seen: 0, exact: 0, sharing: 0, near_pairs: 0, near_hits: 0 })) };
    const sharing = s.pairs.map(() => uint32s());
    const hits = s.pairs.map(() => uint32s());
    counts.train_keys = await ngramPartition(files, p, s, step.tmpDir, counts, sharing);
    if ("signer" in nearDup) await nearPartition(files, p, s, nearDup, counts, hits);
    const lists = [...sharing, ...hits].map((l) => l.view());
    const all = new Uint32Array(lists.reduce((a, l) => a + l.length, 0));
    let at = 0;
    for (const l of lists) {
      all.set(l, at);
      at += l.length;
    }
    await out.share("docs.bin", new Uint8Array(all.buffer));
    await out.share("overlap.json", JSON.stringify(counts));
  },

  async figures(ctx, files) {
    const { ngram, nearDup } = settings(ctx);
    const vocabSize = vocabSizeOf(ctx.config, ctx.baseDir);
    const s = await loadSetup(files);

    // Unigram counts per split: the groups' counts added (integers, exact in doubles in any order).
    const unigrams = new Map(s.order.map((name) => [name, new UnigramCounts(0)]));
    for (let g = 0; g < files.units; g++) {
      const m = s.metas[g];
      if (!m) continue;
      const raw = await files.read("unigram.bin", g);
      const c = new Float64Array(new Uint8Array(raw).buffer);
      for (const sm of m.splits) {
        const u = unigrams.get(sm.name)!;
        if (sm.ids > u.counts.length) {
          const next = new Float64Array(sm.ids);
          next.set(u.counts);
          u.counts = next;
        }
        for (let i = 0; i < sm.ids; i++) u.counts[i] += c[sm.at + i];
        u.total += sm.tokens;
        u.ids = Math.max(u.ids, sm.ids);
      }
    }

    // Per pair: sums over partitions, and unions of the document lists.
    const P = s.pairs.length;
    const sums = s.pairs.map(() => ({ seen: 0, exact: 0, near_pairs: 0 }));
    const sharingDocs = s.pairs.map((_, q) => new Uint8Array(s.documents[s.pairHeld[q]]));
    const nearDocs = s.pairs.map((_, q) => new Uint8Array(s.documents[s.pairHeld[q]]));
    let trainKeys = 0;
    for (let p = 0; p < files.partitions; p++) {
      const head = (await files.shared("overlap.json", p)).toString("utf8");
      if (!head) throw new Error(`overlap: partition ${p} shared nothing (its step did not run?)`);
      const c = JSON.parse(head) as PartitionCounts;
      if (c.pairs.length !== P) throw new Error(`overlap: partition ${p} counted ${c.pairs.length} pairs of splits, the groups give ${P}`);
      trainKeys += c.train_keys;
      const w = words(await files.shared("docs.bin", p));
      let at = 0;
      for (const [q, x] of c.pairs.entries()) {
        sums[q].seen += x.seen;
        sums[q].exact += x.exact;
        sums[q].near_pairs += x.near_pairs;
        for (let i = 0; i < x.sharing; i++) sharingDocs[q][w[at++]] = 1;
      }
      for (const [q, x] of c.pairs.entries()) for (let i = 0; i < x.near_hits; i++) nearDocs[q][w[at++]] = 1;
    }
    const ones = (a: Uint8Array) => a.reduce((n, x) => n + x, 0);
    const vocab = Math.max(vocabSize, ...[...unigrams.values()].map((u) => u.ids));
    const pairs = s.pairs.map(([a, b], q) => {
      const h = s.pairHeld[q];
      const ng = ngramCounts({ documents: s.documents[h], short: s.short[h], exact: sums[q].exact, sharing: ones(sharingDocs[q]), ngrams: s.ngrams[h], seen: sums[q].seen });
      const nd = "signer" in nearDup ? { pairs: sums[q].near_pairs, documents: ones(nearDocs[q]) } : undefined;
      return pairFigures(a, b, ng, nd, unigrams.get(a)!, unigrams.get(b)!, vocab);
    });
    const figures: OverlapFigures = {
      ngram,
      words: wordsDescription(FORM),
      // Exact, always: see the top of this file.
      train_set: { kind: "exact", keys: trainKeys },
      near_duplicates: nearDupDescription(nearDup),
      unigram: { vocab_size: vocab, tokens: Object.fromEntries(s.order.map((name) => [name, unigrams.get(name)!.total])) },
      pairs,
    };
    return figures;
  },
};
