// The overlap figures' definitions and shape, shared by the one-pass counter (split-overlap.ts) and the
// step-wise analysis (src/analysis/overlap-steps.ts): both hand their counts to these functions, so
// the two cannot drift apart in rounding, split order, key order or wording.
import type { SignerParams } from "../dedup/signer.js";
import { crossEntropyAddOneBits, entropyBits, jensenShannonBits, type UnigramCounts } from "./divergence.js";
import type { NgramFigures } from "./held-out.js";
import type { WordForm } from "./words.js";

/** A fixed bit pattern XORed into the high half of text fingerprints, so they never meet n-gram hashes among train's keys. */
export const TEXT_SALT = 0x7e57d0c5;

export interface NearDupSettings {
  signer: SignerParams;
  threshold: number;
  /** Where the settings come from, for the report. */
  basis: string;
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

/** How membership in train was decided: exactly (with the number of distinct keys), or by a Bloom filter. */
export type TrainSetDescription = { kind: "exact"; keys: number } | { kind: "bloom"; bits: number; hashes: number; false_positive_rate: number };

export interface OverlapFigures {
  ngram: number;
  words: string;
  /** How membership in train was decided. */
  train_set: TrainSetDescription;
  near_duplicates: { threshold: number; shingle: string; ngram: number; permutations: number; bands: number; rows: number; basis: string } | { unavailable: string };
  unigram: { vocab_size: number; tokens: Record<string, number> };
  pairs: PairFigures[];
}

export interface NearDupFigures {
  /** Pairs (reference document, held-out document) whose estimated Jaccard similarity reaches the threshold. */
  pairs: number;
  /** Held-out documents in at least one such pair. */
  documents: number;
}

/** Rounds to 6 significant digits: figures stay readable and identical between rebuilds. */
export function sig6(x: number): number {
  return x === 0 ? 0 : Number(x.toPrecision(6));
}

export function splitOrder(names: Iterable<string>): string[] {
  const rank = (s: string) => ["train", "val", "test"].indexOf(s) >>> 0; // unknown names after the three, by name
  return [...names].sort((a, b) => rank(a) - rank(b) || (a < b ? -1 : a > b ? 1 : 0));
}

/** Every (reference, held-out) pair of splits given in split order: each earlier split against each later one that is not train. */
export function heldOutPairs(ordered: readonly string[]): [string, string][] {
  const pairs: [string, string][] = [];
  for (let i = 0; i < ordered.length; i++) for (let j = i + 1; j < ordered.length; j++) if (ordered[j] !== "train") pairs.push([ordered[i], ordered[j]]);
  return pairs;
}

export function wordsDescription(form: WordForm): string {
  return `${form === "none" ? "" : form + ", "}format characters removed, lower-cased, words = runs of letters, marks and digits`;
}

export function nearDupDescription(nd: NearDupSettings | { unavailable: string }): OverlapFigures["near_duplicates"] {
  return "signer" in nd
    ? {
        threshold: nd.threshold,
        shingle: nd.signer.shingle.kind,
        ngram: nd.signer.shingle.ngram,
        permutations: nd.signer.permutations,
        bands: nd.signer.bands,
        rows: nd.signer.rows,
        basis: nd.basis,
      }
    : nd;
}

/** One pair's figures from its counts, rounded; `nd` undefined when near-duplicates are not counted. */
export function pairFigures(a: string, b: string, ng: NgramFigures, nd: NearDupFigures | undefined, ua: UnigramCounts, ub: UnigramCounts, vocab: number): PairFigures {
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
}

/** The n-gram figures of a held-out split from its counts (the fractions unrounded; `pairFigures` rounds). */
export function ngramCounts(c: { documents: number; short: number; exact: number; sharing: number; ngrams: number; seen: number }): NgramFigures {
  return {
    documents: c.documents,
    short_documents: c.short,
    exact_duplicates: c.exact,
    ngram_documents: c.sharing,
    ngram_document_fraction: c.documents ? c.sharing / c.documents : 0,
    ngrams: c.ngrams,
    ngrams_seen: c.seen,
    ngram_fraction: c.ngrams ? c.seen / c.ngrams : 0,
  };
}
