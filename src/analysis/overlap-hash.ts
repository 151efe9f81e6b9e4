// The per-record work of the overlap figures for a batch of texts: words, word n-gram hashes, the
// salted text fingerprint and (when near-duplicates are counted) the MinHash signature with its
// band keys. One deterministic function of (params, texts), run on a worker thread or in the
// calling thread; collectors consume the results in submission order, so threads never change them.
import { BatchSigner, type SignerParams } from "../dedup/signer.js";
import { WorkerPool, compiledModule } from "../parallel/pool.js";
import { loadHasher, xxh64String } from "../lib/hash.js";
import { uint32s } from "../lib/grow.js";
import { TEXT_SALT } from "../overlap/figures.js";
import { NgramHasher } from "../overlap/ngram-hash.js";
import { wordsOf, type WordForm } from "../overlap/words.js";

/** Plain data, so a worker can be given it as workerData. */
export interface HashParams {
  ngram: number;
  form: WordForm;
  /** MinHash settings; undefined when near-duplicates are not counted. */
  signer?: SignerParams;
}

/** One batch's results, in the batch's order; the buffers move back from a worker without copying. */
export interface HashedBatch {
  count: number;
  /** Document i's n-gram hashes are hi/lo[start[i], start[i + 1]) (none when it has fewer words than n). */
  start: Uint32Array;
  hi: Uint32Array;
  lo: Uint32Array;
  /** The XXH64 of the text's UTF-8 bytes as two halves, the high one XORed with TEXT_SALT (as the one-pass counter does). */
  textHi: Uint32Array;
  textLo: Uint32Array;
  /** count × permutations values and count × bands keys, when signing. */
  signatures?: Uint32Array;
  bandKeys?: Uint32Array;
}

export function transferList(b: HashedBatch): ArrayBuffer[] {
  const list = [b.start, b.hi, b.lo, b.textHi, b.textLo, b.signatures, b.bandKeys].filter((a): a is Uint32Array => a !== undefined);
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

  hash(texts: string[]): HashedBatch {
    const count = texts.length;
    const start = new Uint32Array(count + 1);
    const hi = uint32s();
    const lo = uint32s();
    const textHi = new Uint32Array(count);
    const textLo = new Uint32Array(count);
    for (let i = 0; i < count; i++) {
      const n = this.ngrams.hash(wordsOf(texts[i], this.p.form));
      for (let x = 0; x < n; x++) {
        hi.push(this.ngrams.hi[x]);
        lo.push(this.ngrams.lo[x]);
      }
      start[i + 1] = start[i] + n;
      const h = xxh64String(texts[i]);
      textHi[i] = Number(h >> 32n) ^ TEXT_SALT;
      textLo[i] = Number(h & 0xffffffffn);
    }
    const out: HashedBatch = { count, start, hi: hi.view().slice(), lo: lo.view().slice(), textHi, textLo };
    if (this.signer) {
      const s = this.signer.sign(texts);
      out.signatures = s.signatures;
      out.bandKeys = s.bandKeys;
    }
    return out;
  }
}

/** Hashing on `threads` worker threads (1 or fewer: in the calling thread, as under a test runner without dist/). */
export function hashPool(params: HashParams, threads: number): WorkerPool<string[], HashedBatch> {
  return new WorkerPool<string[], HashedBatch>({
    module: compiledModule("./overlap-hash-worker.js", import.meta.url),
    init: params,
    threads,
    name: "overlap hashing worker",
    local: async () => {
      await loadHasher();
      const h = new DocHasher(params);
      return async (texts) => h.hash(texts);
    },
  });
}
