// The per-record work of the overlap figures for a batch of texts: words, word n-gram hashes, the
// salted text fingerprint and (when near-duplicates are counted) the MinHash signature with its
// band keys. One deterministic function of (params, texts), run on a worker thread or in the
// calling thread; collectors consume the results in submission order, so threads never change them.
import { BatchSigner, type SignerParams } from "../dedup/signer.js";
import { WorkerPool, compiledModule } from "../parallel/pool.js";
import { loadHasher, xxh64Bytes } from "../lib/hash.js";
import { uint32s } from "../lib/grow.js";
import { HI, LO } from "./distinct-keys.js";
import { TEXT_SALT } from "../overlap/figures.js";
import { NgramHasher } from "../overlap/ngram-hash.js";
import type { WordForm } from "../overlap/words.js";

/** Plain data, so a worker can be given it as workerData. */
export interface HashParams {
  ngram: number;
  form: WordForm;
  /** MinHash settings; undefined when near-duplicates are not counted. */
  signer?: SignerParams;
}

/**
 * A batch to hash, in three buffers that move to the worker without a copy or a clone per text: the
 * texts' UTF-8 one after the other, where each ends, and which are train's (1) rather than a
 * held-out split's (0).
 */
export interface HashRequest {
  /** Partitions train's keys are grouped into (see byPartition). */
  partitions: number;
  text: Uint8Array;
  ends: Uint32Array;
  train: Uint8Array;
  /**
   * Signatures made before (by the MinHash dedup stage, src/analysis/dedup-signatures.ts): text i's
   * are values [i·k, (i+1)·k) of `values` where `has[i]` is 1; the others are signed here.
   */
  given?: { has: Uint8Array; values: Uint32Array };
}

/** Gathers texts into a HashRequest. */
export class TextBatch {
  private buf = Buffer.allocUnsafeSlow(1 << 16);
  private at = 0;
  private ends: number[] = [];
  private train: number[] = [];
  private has: number[] = [];
  private signatures: Uint32Array[] = [];

  get count(): number {
    return this.ends.length;
  }

  /** A text, with its signature when one was made before. */
  add(text: string, train: boolean, signature?: Uint32Array): void {
    this.room(3 * text.length);
    this.at += this.buf.write(text, this.at, "utf8");
    this.end(train, signature);
  }

  /** A text given as its UTF-8 bytes. */
  addBytes(utf8: Uint8Array, train: boolean, signature?: Uint32Array): void {
    this.room(utf8.length);
    this.buf.set(utf8, this.at);
    this.at += utf8.length;
    this.end(train, signature);
  }

  private room(bytes: number): void {
    const need = this.at + bytes;
    if (need <= this.buf.length) return;
    const bigger = Buffer.allocUnsafeSlow(Math.max(need, 2 * this.buf.length));
    this.buf.copy(bigger, 0, 0, this.at);
    this.buf = bigger;
  }

  private end(train: boolean, signature?: Uint32Array): void {
    this.ends.push(this.at);
    this.train.push(train ? 1 : 0);
    this.has.push(signature ? 1 : 0);
    if (signature) this.signatures.push(signature);
  }

  /** The batch (in memory of its own, never Node's shared pool, so it can move); then empty. */
  take(partitions: number): HashRequest {
    const req: HashRequest = { partitions, text: this.buf.subarray(0, this.at), ends: Uint32Array.from(this.ends), train: Uint8Array.from(this.train) };
    if (this.signatures.length > 0) {
      const k = this.signatures[0].length;
      const values = new Uint32Array(this.ends.length * k);
      for (let i = 0, s = 0; i < this.ends.length; i++) if (this.has[i]) values.set(this.signatures[s++], i * k);
      req.given = { has: Uint8Array.from(this.has), values };
    }
    this.buf = Buffer.allocUnsafeSlow(this.buf.length);
    this.at = 0;
    this.ends = [];
    this.train = [];
    this.has = [];
    this.signatures = [];
    return req;
  }
}

/** One batch's results, in the batch's order; the buffers move back from a worker without copying. */
export interface HashedBatch {
  count: number;
  /** N-gram positions of document i (0 when it has fewer words than n). */
  ngrams: Uint32Array;
  /** The n-gram hashes of the held-out documents, one after the other in batch order. */
  hi: Uint32Array;
  lo: Uint32Array;
  /**
   * Train's n-gram hashes and text fingerprints in the batch, as 64-bit keys (pairs of halves in this
   * machine's layout, see distinct-keys.ts), grouped by partition on the hashing thread: partition p's
   * are entries [trainStarts[p], trainStarts[p + 1]). Repeats stay (only presence counts, and the
   * partition step sorts all of a partition's keys once: cheaper than sorting each batch as well).
   */
  trainKeys: Uint32Array;
  trainStarts: Uint32Array;
  /** The XXH64 of the text's UTF-8 bytes as two halves, the high one XORed with TEXT_SALT (as the one-pass counter does). */
  textHi: Uint32Array;
  textLo: Uint32Array;
  /** count × permutations values and count × bands keys, when signing. */
  signatures?: Uint32Array;
  bandKeys?: Uint32Array;
}

export function transferList(b: HashedBatch): ArrayBuffer[] {
  const list = [b.ngrams, b.hi, b.lo, b.trainKeys, b.trainStarts, b.textHi, b.textLo, b.signatures, b.bandKeys].filter((a): a is Uint32Array => a !== undefined);
  return list.map((a) => a.buffer as ArrayBuffer);
}

/** Needs `loadHasher()` done before `hash` is called (XXH64 of the texts). */
export class DocHasher {
  private readonly ngrams: NgramHasher;
  private readonly signer: BatchSigner | undefined;

  constructor(private readonly p: HashParams) {
    this.ngrams = new NgramHasher(p.ngram);
    this.signer = p.signer ? new BatchSigner(p.signer) : undefined;
  }

  hash({ partitions, text, ends, train, given }: HashRequest): HashedBatch {
    const count = ends.length;
    const bytes = Buffer.from(text.buffer, text.byteOffset, text.byteLength);
    const texts: string[] = [];
    for (let i = 0; i < count; i++) texts.push(bytes.toString("utf8", i === 0 ? 0 : ends[i - 1], ends[i]));
    const ngrams = new Uint32Array(count);
    const hi = uint32s();
    const lo = uint32s();
    const keys = uint32s();
    const textHi = new Uint32Array(count);
    const textLo = new Uint32Array(count);
    const pair = (h: number, l: number) => {
      // Pushed in the machine's 64-bit layout, so a BigUint64Array view sorts them as keys.
      if (LO === 0) keys.push(l), keys.push(h);
      else keys.push(h), keys.push(l);
    };
    for (let i = 0; i < count; i++) {
      const n = this.ngrams.hashText(texts[i], this.p.form);
      ngrams[i] = n;
      const h = xxh64Bytes(bytes.subarray(i === 0 ? 0 : ends[i - 1], ends[i]));
      textHi[i] = Number(h >> 32n) ^ TEXT_SALT;
      textLo[i] = Number(h & 0xffffffffn);
      if (train[i]) {
        for (let x = 0; x < n; x++) pair(this.ngrams.hi[x], this.ngrams.lo[x]);
        pair(textHi[i], textLo[i]);
      } else
        for (let x = 0; x < n; x++) {
          hi.push(this.ngrams.hi[x]);
          lo.push(this.ngrams.lo[x]);
        }
    }
    const grouped = byPartition(keys.view(), partitions);
    const out: HashedBatch = { count, ngrams, hi: hi.view().slice(), lo: lo.view().slice(), trainKeys: grouped.keys, trainStarts: grouped.starts, textHi, textLo };
    if (this.signer && given) {
      // Only the texts without a signature are signed; the given ones get their band keys here.
      const { permutations: k, bands } = this.signer.params;
      const s = this.signer.sign(texts.filter((_, i) => !given.has[i]));
      const signatures = given.values;
      const bandKeys = new Uint32Array(count * bands);
      for (let i = 0, j = 0; i < count; i++) {
        if (given.has[i]) this.signer.bandKeysOf(signatures, i, bandKeys);
        else {
          signatures.set(s.signatures.subarray(j * k, (j + 1) * k), i * k);
          bandKeys.set(s.bandKeys.subarray(j * bands, (j + 1) * bands), i * bands);
          j++;
        }
      }
      out.signatures = signatures;
      out.bandKeys = bandKeys;
    } else if (this.signer) {
      const s = this.signer.sign(texts);
      out.signatures = s.signatures;
      out.bandKeys = s.bandKeys;
    }
    return out;
  }
}

/**
 * The 64-bit keys of `w` (pairs of halves) grouped by partition (keyPartition of the high half), in
 * their order within each: a counting pass and a placing pass. `starts[p]` is where partition p's
 * keys begin, in keys; `starts[partitions]` is their number.
 */
export function byPartition(w: Uint32Array, partitions: number): { keys: Uint32Array; starts: Uint32Array } {
  const n = w.length / 2;
  const starts = new Uint32Array(partitions + 1);
  if (partitions === 1) {
    starts[1] = n;
    return { keys: w.slice(), starts };
  }
  const part = new Uint32Array(n);
  for (let i = 0; i < n; i++) starts[(part[i] = keyPartition(w[2 * i + HI], partitions)) + 1]++;
  for (let p = 1; p <= partitions; p++) starts[p] += starts[p - 1];
  const at = starts.slice(0, partitions);
  const keys = new Uint32Array(w.length);
  for (let i = 0; i < n; i++) {
    const j = at[part[i]]++;
    keys[2 * j] = w[2 * i];
    keys[2 * j + 1] = w[2 * i + 1];
  }
  return { keys, starts };
}

/** Partition of an n-gram key or text fingerprint: by the range its high half falls in. */
export function keyPartition(hi: number, partitions: number): number {
  return Math.floor((hi * partitions) / 4294967296);
}

/** Hashing on `threads` worker threads (1 or fewer: in the calling thread, as under a test runner without dist/). */
export function hashPool(params: HashParams, threads: number): WorkerPool<HashRequest, HashedBatch> {
  return new WorkerPool<HashRequest, HashedBatch>({
    module: compiledModule("./overlap-hash-worker.js", import.meta.url),
    init: params,
    threads,
    name: "overlap hashing worker",
    transfer: (r) => [r.text.buffer as ArrayBuffer, r.ends.buffer as ArrayBuffer, r.train.buffer as ArrayBuffer, ...(r.given ? [r.given.has.buffer as ArrayBuffer, r.given.values.buffer as ArrayBuffer] : [])],
    local: async () => {
      await loadHasher();
      const h = new DocHasher(params);
      return async (req) => h.hash(req);
    },
  });
}
