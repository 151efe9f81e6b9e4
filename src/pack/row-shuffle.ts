// Row shuffling between a packer and the shard writer: a seeded shuffle buffer of a bounded number of rows.
import type { CutEdges, Packer, RowPiece, RowSink } from "./packer.js";
import type { PackStats } from "./tally.js";
import { Rng } from "./rng.js";

/**
 * A shuffle buffer: the first `window` rows fill it; after that each incoming row sends out a
 * uniformly chosen buffered row and takes its slot; `finish` sends the rest out in a random
 * permutation. Memory is `window` × `length` × 8 bytes at most (grown on demand, so small held-out
 * splits stay small), and rows mix across shard boundaries. A row leaves at most `window`
 * positions earlier than it came in; it may leave much later. The order depends only on the seed
 * and the incoming rows, so a rebuild is byte-identical.
 */
export class RowShuffle {
  readonly window: number;
  readonly length: number;
  private readonly rng: Rng;
  private readonly out: RowSink;
  private tokens: Uint32Array;
  private segments: Uint32Array;
  /** Each slot's pieces: they travel with their row. */
  private readonly pieces: (readonly RowPiece[])[] = [];
  private count = 0;

  constructor(length: number, window: number, seed: number, out: RowSink) {
    if (!Number.isInteger(window) || window < 1) throw new Error(`shuffle window must be a positive integer, got ${window}`);
    this.length = length;
    this.window = window;
    this.rng = new Rng(seed);
    this.out = out;
    const rows = Math.min(window, 64);
    this.tokens = new Uint32Array(rows * length);
    this.segments = new Uint32Array(rows * length);
  }

  /** The sink to give the packer. */
  readonly sink: RowSink = (tokens, segments, pieces) => {
    const L = this.length;
    if (this.count < this.window) {
      if ((this.count + 1) * L > this.tokens.length) this.grow();
      this.tokens.set(tokens, this.count * L);
      this.segments.set(segments, this.count * L);
      this.pieces[this.count] = pieces;
      this.count++;
      return;
    }
    const j = this.rng.below(this.window);
    this.send(j);
    this.tokens.set(tokens, j * L);
    this.segments.set(segments, j * L);
    this.pieces[j] = pieces;
  };

  /** Sends every buffered row out, in a uniformly random order (Fisher–Yates, drawing the next row each time). */
  finish(): void {
    const L = this.length;
    for (let n = this.count; n > 0; n--) {
      const j = this.rng.below(n);
      this.send(j);
      if (j !== n - 1) {
        this.tokens.copyWithin(j * L, (n - 1) * L, n * L);
        this.segments.copyWithin(j * L, (n - 1) * L, n * L);
        this.pieces[j] = this.pieces[n - 1];
      }
    }
    this.count = 0;
    this.pieces.length = 0;
  }

  private send(slot: number): void {
    const L = this.length;
    this.out(this.tokens.subarray(slot * L, (slot + 1) * L), this.segments.subarray(slot * L, (slot + 1) * L), this.pieces[slot] ?? []);
  }

  private grow(): void {
    const rows = Math.min(this.window, 2 * (this.tokens.length / this.length));
    const tokens = new Uint32Array(rows * this.length);
    const segments = new Uint32Array(rows * this.length);
    tokens.set(this.tokens);
    segments.set(this.segments);
    this.tokens = tokens;
    this.segments = segments;
  }
}

/** A packer whose rows pass through a shuffle buffer; `finish` drains the packer, then the buffer. */
export class ShuffledPacker implements Packer {
  constructor(
    private readonly inner: Packer,
    private readonly shuffle: RowShuffle,
  ) {}

  add(doc: Uint32Array, ref?: unknown, edges?: CutEdges): void {
    this.inner.add(doc, ref, edges);
  }

  finish(): void {
    this.inner.finish();
    this.shuffle.finish();
  }

  get stats(): PackStats {
    return this.inner.stats;
  }
}
