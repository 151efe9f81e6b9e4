// Overlap between splits, computed in one pass over records that arrive interleaved across splits.
//
// Train may be huge, held-out splits are small. So held-out n-grams and text fingerprints are kept
// exactly (held-out.ts), while train's are only tested against them and added to a bounded set
// (train-set.ts: exact, then a Bloom filter with a measured false-positive rate). A match between a
// train and a held-out document is found whichever comes first: a held-out document looks its keys
// up in the train set; a train document marks the held-out keys it matches. Only the first case can
// err, and only when the train set has become a filter: then by its reported false-positive rate.
import { xxh64String } from "../lib/hash.js";
import { UnigramCounts } from "./divergence.js";
import { HeldOutSplit, ngramFigures, type NgramFigures } from "./held-out.js";
import { NgramHasher } from "./ngram-hash.js";
import { NearDupCounter } from "./near-dups.js";
import { DEFAULT_LIMITS, TrainSet, type TrainSetLimits } from "./train-set.js";
import type { WordForm } from "./words.js";
import { heldOutPairs, nearDupDescription, pairFigures, sig6, splitOrder, TEXT_SALT, wordsDescription, type NearDupSettings, type OverlapFigures } from "./figures.js";

// The figures' types and helpers live in figures.ts (shared with the step-wise analysis); re-exported for existing importers.
export { sig6, splitOrder, type NearDupSettings, type OverlapFigures, type PairFigures } from "./figures.js";

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
    const count = this.hasher.hashText(text, this.p.form);
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
    const pairs = heldOutPairs(splits);
    const near = this.nearDups?.finish(pairs);
    const vocab = Math.max(this.p.vocabSize, ...[...this.unigrams.values()].map((u) => u.ids));
    const empty = new UnigramCounts(0);
    const out = pairs.map(([a, b]) => {
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
      return pairFigures(a, b, ng, near?.get(`${a}\u0000${b}`), this.unigrams.get(a) ?? empty, this.unigrams.get(b) ?? empty, vocab);
    });
    const ts = this.train.describe();
    return {
      ngram: this.p.ngram,
      words: wordsDescription(this.p.form),
      train_set: ts.kind === "bloom" ? { ...ts, false_positive_rate: sig6(ts.false_positive_rate) } : ts,
      near_duplicates: nearDupDescription(this.p.nearDup),
      unigram: { vocab_size: vocab, tokens: Object.fromEntries(splits.map((s) => [s, this.unigrams.get(s)!.total])) },
      pairs: out,
    };
  }
}
