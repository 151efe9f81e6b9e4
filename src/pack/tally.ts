// What a packer did to the documents it was given: counts, cuts and lengths, for the manifest.
import { LengthHistogram, type HistogramBucket } from "./length-histogram.js";

/**
 * Packing statistics of one split.
 *
 * A document that does not fit where it is placed is cut into pieces, each in a different row. The
 * first token of every later piece (a continuation) is not a target, since the token before it is
 * in another row: `targets_lost_to_cuts` counts those (one per cut). No token is dropped by any
 * strategy, but the tokens of a continuation see only the part of their document in their own
 * row: `continuation_tokens` counts them.
 */
export interface PackStats {
  documents: number;
  /** Documents placed in two or more pieces. */
  cut_documents: number;
  /** Tokens that are not targets only because their document was cut just before them (= number of cuts). */
  targets_lost_to_cuts: number;
  /** Tokens in continuation pieces (all pieces of a cut document but its first). */
  continuation_tokens: number;
  /** Document lengths in tokens (as packed, BOS/EOS included), power-of-two buckets. */
  length_histogram: HistogramBucket[];
}

export class PackTally {
  documents = 0;
  cutDocuments = 0;
  private targetsLost = 0;
  private continuationTokens = 0;
  private readonly histogram = new LengthHistogram();

  /** One document of `length` tokens, placed as `pieces` pieces of which the first holds `first` tokens. */
  document(length: number, pieces: number, first: number): void {
    this.documents++;
    this.histogram.add(length);
    if (pieces > 1) {
      this.cutDocuments++;
      this.targetsLost += pieces - 1;
      this.continuationTokens += length - first;
    }
  }

  stats(): PackStats {
    return {
      documents: this.documents,
      cut_documents: this.cutDocuments,
      targets_lost_to_cuts: this.targetsLost,
      continuation_tokens: this.continuationTokens,
      length_histogram: this.histogram.buckets(),
    };
  }
}
