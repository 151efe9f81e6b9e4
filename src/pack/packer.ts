// The packer contract (documents in, fixed-length rows out) and the row buffer every strategy shares.
import { PackTally, type PackStats } from "./tally.js";

/**
 * One document piece of a row: what the caller passed to `add` with the document (its reference,
 * e.g. where the record came from) and the piece's first token's offset within the document (0
 * unless the document was cut before it). A row's pieces are in segment order: segment k is piece k − 1.
 */
export interface RowPiece {
  doc: unknown;
  offset: number;
}

/** Receives full rows: `tokens` and `segments` are views valid only during the call; `pieces` is the row's own. */
export type RowSink = (tokens: Uint32Array, segments: Uint32Array, pieces: readonly RowPiece[]) => void;

/** Turns a split's documents (token arrays) into rows; one packer per split. */
export interface Packer {
  /**
   * Takes one document; the array may be reused by the caller after the call returns. `ref` comes
   * back with every piece of the document in the rows (`RowPiece.doc`); packing never looks at it.
   */
  add(doc: Uint32Array, ref?: unknown, edges?: CutEdges): void;
  /** Emits whatever is still buffered (padded). */
  finish(): void;
  /** Statistics so far (complete after `finish`). */
  readonly stats: PackStats;
}

/**
 * A row under construction: `tokens` / `segments` of `length`, padded with `padId` / segment 0 and
 * handed to the sink by `emit`. Segment ids count from 1 within each row.
 */
export abstract class RowPacker implements Packer {
  readonly length: number;
  readonly padId: number;
  protected readonly tokens: Uint32Array;
  protected readonly segments: Uint32Array;
  protected readonly tally = new PackTally();
  /** The pieces of the row under construction, in segment order. */
  protected pieces: RowPiece[] = [];
  private readonly sink: RowSink;

  constructor(length: number, padId: number, sink: RowSink) {
    this.length = length;
    this.padId = padId;
    this.tokens = new Uint32Array(length);
    this.segments = new Uint32Array(length);
    this.sink = sink;
  }

  /** `edges`: where a document longer than a row may be cut (pieceStarts); strategies that keep documents whole honour them. */
  abstract add(doc: Uint32Array, ref?: unknown, edges?: CutEdges): void;
  abstract finish(): void;

  /** Pads the row from `fill` on and hands it to the sink. */
  protected emit(fill: number): void {
    if (fill < this.length) {
      this.tokens.fill(this.padId, fill);
      this.segments.fill(0, fill);
    }
    const pieces = this.pieces;
    this.pieces = [];
    this.sink(this.tokens, this.segments, pieces);
  }

  get stats(): PackStats {
    return this.tally.stats();
  }

  /** Documents given so far (empty ones are ignored). */
  get documents(): number {
    return this.tally.documents;
  }

  /** Documents split across two or more rows. */
  get cutDocuments(): number {
    return this.tally.cutDocuments;
  }
}

/** Where a document may be cut (a conversation's turn edges): offsets, ascending, and the ones to prefer. */
export interface CutEdges {
  at: readonly number[];
  /** Edges where a piece had better start (a conversation's questions: an answer then keeps its question). */
  preferred?: ReadonlySet<number>;
}

/**
 * Where a document of `n` tokens is cut into pieces of at most `length`: every `length` tokens, or,
 * given `edges`, at the last preferred edge that keeps the piece within `length`, else the last
 * edge that does. The caller makes sure no stretch between two edges is longer than `length` (so
 * from any edge the next is within reach). Returns the pieces' start offsets (the first is 0).
 */
export function pieceStarts(n: number, length: number, edges?: CutEdges): number[] {
  const out: number[] = [0];
  if (!edges) {
    for (let at = length; at < n; at += length) out.push(at);
    return out;
  }
  const e = edges.at;
  let at = 0;
  let k = 0;
  while (n - at > length) {
    let cut = -1;
    let preferred = -1;
    while (k < e.length && e[k] - at <= length) {
      if (e[k] > at) {
        cut = e[k];
        if (edges.preferred?.has(e[k])) preferred = e[k];
      }
      k++;
    }
    if (cut < 0) throw new Error(`pieceStarts: no edge within ${length} tokens of ${at}`);
    const next = preferred > 0 ? preferred : cut;
    out.push(next);
    at = next;
    // Edges passed over after the chosen one are candidates again for the next piece.
    while (k > 0 && e[k - 1] > at) k--;
  }
  return out;
}
