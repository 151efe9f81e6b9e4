// Overlap between splits, computed in one pass over records that arrive interleaved across splits.
//
// Train may be huge, held-out splits are small. So held-out n-grams and text fingerprints are kept
// exactly (held-out.ts), while train's are only tested against them and added to a bounded set
// (train-set.ts: exact, then a Bloom filter with a measured false-positive rate). A match between a
// train and a held-out document is found whichever comes first: a held-out document looks its keys
// up in the train set; a train document marks the held-out keys it matches. Only the first case can
// err, and only when the train set has become a filter: then by its reported false-positive rate.
import { xxh64String } from "../lib/hash.js";
import { crossEntropyAddOneBits, entropyBits, jensenShannonBits, UnigramCounts } from "./divergence.js";
import { HeldOutSplit, ngramFigures, type NgramFigures } from "./held-out.js";
import { NgramHasher } from "./ngram-hash.js";
import { NearDupCounter } from "./near-dups.js";
import { DEFAULT_LIMITS, TrainSet, type TrainSetLimits } from "./train-set.js";
import { wordsOf, type WordForm } from "./words.js";
import type { SignerParams } from "../dedup/signer.js";

/** A fixed bit pattern XORed into text fingerprints, so they never meet n-gram hashes in the shared train set. */
const TEXT_SALT = 0x7e57d0c5;

export interface NearDupSettings {
  signer: SignerParams;
  threshold: number;
  /** Where the settings come from, for the report. */
  basis: string;
}

export interface OverlapParams {
  ngram: number;
  form: WordForm;
  /** Tokenizer vocabulary size: V of the add-one model. */
  vocabSize: number;
  /** MinHash settings, or why near-duplicates are not counted. */
  nearDup: NearDupSettings | { unavailable: string };
  /** A directory for the temporary spill of train signatures (removed at finish). */
  tmpDir: string;
  trainLimits?: TrainSetLimits;
}

export interface PairFigures extends NgramFigures {
  reference: string;
  held_out: string;
  near_duplicate_pairs: number | null;
  near_duplicate_documents: number | null;
  jensen_shannon_bits: number;
  /** Bits per token of the held-out split under the reference's add-one unigram model… */
  cross_entropy_bits: number;
  /** …and under its own (maximum-likelihood) unigram distribution; the gap is what the shift costs. */
  entropy_bits: number;
}

export interface OverlapFigures {
  ngram: number;
  words: string;
  /** How membership in train was decided. */
  train_set: ReturnType<TrainSet["describe"]>;
  near_duplicates: { threshold: number; shingle: string; ngram: number; permutations: number; bands: number; rows: number; basis: string } | { unavailable: string };
  unigram: { vocab_size: number; tokens: Record<string, number> };
  pairs: PairFigures[];
}

/** Rounds to 6 significant digits: figures stay readable and identical between rebuilds. */
export function sig6(x: number): number {
  return x === 0 ? 0 : Number(x.toPrecision(6));
}

export function splitOrder(names: Iterable<string>): string[] {
  const rank = (s: string) => ["train", "val", "test"].indexOf(s) >>> 0; // unknown names after the three, by name
  return [...names].sort((a, b) => rank(a) - rank(b) || (a < b ? -1 : a > b ? 1 : 0));
}

export class SplitOverlap {
  private readonly hasher: NgramHasher;
  private readonly train: TrainSet;
  private readonly heldOut = new Map<string, HeldOutSplit>();
  private readonly unigrams = new Map<string, UnigramCounts>();
  private readonly nearDups: NearDupCounter | undefined;
  private readonly inTrain = (hi: number, lo: number) => this.train.has(hi, lo);

  constructor(private readonly p: OverlapParams) {
    this.hasher = new NgramHasher(p.ngram);
    this.train = new TrainSet(p.trainLimits ?? DEFAULT_LIMITS);
    if ("signer" in p.nearDup) this.nearDups = new NearDupCounter(p.nearDup.signer, p.nearDup.threshold, p.tmpDir);
  }

  /** One kept document of `split` (records without a split are train); `tokens` as packed. */
  add(split: string, text: string, tokens: ArrayLike<number> | undefined): void {
    const count = this.hasher.hash(wordsOf(text, this.p.form));
    const { hi, lo } = this.hasher;
    const h = xxh64String(text);
    const textHi = Number(h >> 32n) ^ TEXT_SALT;
    const textLo = Number(h & 0xffffffffn);
    if (split === "train") {
      for (const s of this.heldOut.values()) s.markTrain(hi, lo, count, textHi, textLo);
      for (let i = 0; i < count; i++) this.train.add(hi[i], lo[i]);
      this.train.add(textHi, textLo);
    } else {
      let s = this.heldOut.get(split);
      if (!s) this.heldOut.set(split, (s = new HeldOutSplit(split)));
      s.addDocument(hi, lo, count, textHi, textLo, this.inTrain);
    }
    let u = this.unigrams.get(split);
    if (!u) this.unigrams.set(split, (u = new UnigramCounts(this.p.vocabSize)));
    if (tokens) u.add(tokens);
    this.nearDups?.add(split, text);
  }

  finish(): OverlapFigures {
    const splits = splitOrder(this.unigrams.keys());
    const pairs: [string, string][] = [];
    for (let i = 0; i < splits.length; i++) for (let j = i + 1; j < splits.length; j++) if (splits[j] !== "train") pairs.push([splits[i], splits[j]]);
    const near = this.nearDups?.finish(pairs);
    const vocab = Math.max(this.p.vocabSize, ...[...this.unigrams.values()].map((u) => u.ids));
    const empty = new UnigramCounts(0);
    const out: PairFigures[] = pairs.map(([a, b]) => {
      const hb = this.heldOut.get(b)!;
      let ng: NgramFigures;
      if (a === "train") {
        ng = ngramFigures(hb, (slot) => hb.slotInTrain.get(slot) === 1, (cls) => hb.textInTrain.get(cls) === 1);
      } else {
        const ha = this.heldOut.get(a)!;
        ng = ngramFigures(
          hb,
          (slot) => ha.grams.has(hb.slotHi.get(slot), hb.slotLo.get(slot)),
          (cls) => ha.texts.has(hb.textHi.get(cls), hb.textLo.get(cls)),
        );
      }
      const ua = this.unigrams.get(a) ?? empty;
      const ub = this.unigrams.get(b) ?? empty;
      const nd = near?.get(`${a}\u0000${b}`);
      return {
        reference: a,
        held_out: b,
        ...ng,
        ngram_document_fraction: sig6(ng.ngram_document_fraction),
        ngram_fraction: sig6(ng.ngram_fraction),
        near_duplicate_pairs: nd ? nd.pairs : null,
        near_duplicate_documents: nd ? nd.documents : null,
        jensen_shannon_bits: sig6(jensenShannonBits(ua.counts, ua.total, ub.counts, ub.total)),
        cross_entropy_bits: sig6(crossEntropyAddOneBits(ub.counts, ub.total, ua.counts, ua.total, vocab)),
        entropy_bits: sig6(entropyBits(ub.counts, ub.total)),
      };
    });
    const nd = this.p.nearDup;
    const ts = this.train.describe();
    return {
      ngram: this.p.ngram,
      words: `${this.p.form === "none" ? "" : this.p.form + ", "}format characters removed, lower-cased, words = runs of letters, marks and digits`,
      train_set: ts.kind === "bloom" ? { ...ts, false_positive_rate: sig6(ts.false_positive_rate) } : ts,
      near_duplicates:
        "signer" in nd
          ? {
              threshold: nd.threshold,
              shingle: nd.signer.shingle.kind,
              ngram: nd.signer.shingle.ngram,
              permutations: nd.signer.permutations,
              bands: nd.signer.bands,
              rows: nd.signer.rows,
              basis: nd.basis,
            }
          : nd,
      unigram: { vocab_size: vocab, tokens: Object.fromEntries(splits.map((s) => [s, this.unigrams.get(s)!.total])) },
      pairs: out,
    };
  }
}
