// `best-fit` packing: whole documents placed by best-fit decreasing into rows, within a bounded look-ahead buffer.
import { pieceStarts, RowPacker, type CutEdges, type RowSink } from "./packer.js";
import { CapacityIndex } from "./capacity-index.js";

/**
 * The method of Ding et al. 2024, "Fewer Truncations Improve Language Modeling" (ICML): a document
 * of at most `length` tokens is never cut; a longer one is cut into `length`-token chunks first and
 * its remainder is packed like any document. Pieces are placed by best-fit decreasing (longest
 * first, each into the open row with the least room that still holds it, else a new row).
 *
 * Streaming: pieces wait in a buffer of at most `bufferDocs`; when it is full, the buffer is packed
 * and all its rows are emitted (row index order), so memory stays at most `bufferDocs` × `length`
 * tokens. Rows left part-empty at the end of a buffer are padded; a bigger buffer pads less.
 *
 * Deterministic: pieces are sorted by length, longest first, ties in input order; a piece goes to
 * the row with the smallest free space ≥ its length, ties to the lowest row index (rows are
 * numbered in opening order). Inside a row, pieces are laid out in input order.
 */
export class BestFitPacker extends RowPacker {
  readonly bufferDocs: number;
  private pool = new Uint32Array(1 << 16);
  private poolFill = 0;
  private pieceStart = new Float64Array(256);
  private pieceLen = new Uint32Array(256);
  /** Each buffered piece's document reference and offset within its document (see RowPiece). */
  private pieceRef: unknown[] = [];
  private pieceOffset: number[] = [];
  private count = 0;
  private readonly index: CapacityIndex;

  constructor(length: number, padId: number, sink: RowSink, bufferDocs: number) {
    super(length, padId, sink);
    if (!Number.isInteger(bufferDocs) || bufferDocs < 1) throw new Error(`buffer_docs must be a positive integer, got ${bufferDocs}`);
    this.bufferDocs = bufferDocs;
    this.index = new CapacityIndex(length);
  }

  add(doc: Uint32Array, ref?: unknown, edges?: CutEdges): void {
    if (doc.length === 0) return;
    const L = this.length;
    if (!edges || doc.length <= L) {
      this.tally.document(doc.length, Math.ceil(doc.length / L), Math.min(doc.length, L));
      for (let at = 0; at < doc.length; at += L) {
        if (this.count === this.bufferDocs) this.packBuffer();
        this.push(doc.subarray(at, Math.min(at + L, doc.length)), ref, at);
      }
      return;
    }
    // A conversation longer than a row: pieces of whole turns, each packed like a document.
    const starts = pieceStarts(doc.length, L, edges);
    this.tally.document(doc.length, starts.length, starts.length > 1 ? starts[1] : doc.length);
    starts.forEach((at, k) => {
      if (this.count === this.bufferDocs) this.packBuffer();
      this.push(doc.subarray(at, k + 1 < starts.length ? starts[k + 1] : doc.length), ref, at);
    });
  }

  finish(): void {
    if (this.count > 0) this.packBuffer();
  }

  private push(piece: Uint32Array, ref: unknown, offset: number): void {
    if (this.count === this.pieceLen.length) {
      const n = Math.min(this.bufferDocs, this.count * 2);
      const starts = new Float64Array(n);
      starts.set(this.pieceStart);
      this.pieceStart = starts;
      const lens = new Uint32Array(n);
      lens.set(this.pieceLen);
      this.pieceLen = lens;
    }
    if (this.poolFill + piece.length > this.pool.length) {
      const pool = new Uint32Array(Math.max(this.pool.length * 2, this.poolFill + piece.length));
      pool.set(this.pool.subarray(0, this.poolFill));
      this.pool = pool;
    }
    this.pool.set(piece, this.poolFill);
    this.pieceStart[this.count] = this.poolFill;
    this.pieceLen[this.count] = piece.length;
    this.pieceRef[this.count] = ref;
    this.pieceOffset[this.count] = offset;
    this.poolFill += piece.length;
    this.count++;
  }

  /** Best-fit decreasing over the buffered pieces; emits every row and empties the buffer. */
  private packBuffer(): void {
    const n = this.count;
    const L = this.length;
    const len = this.pieceLen;
    const order = new Uint32Array(n);
    for (let i = 0; i < n; i++) order[i] = i;
    order.sort((a, b) => len[b] - len[a] || a - b);

    const rowOf = new Int32Array(n);
    const free = new Int32Array(n);
    let rows = 0;
    for (let k = 0; k < n; k++) {
      const p = order[k];
      let r = this.index.takeBest(len[p]);
      if (r < 0) {
        r = rows++;
        free[r] = L;
      }
      free[r] -= len[p];
      rowOf[p] = r;
      if (free[r] > 0) this.index.add(r, free[r]);
    }
    this.index.clear();

    // Counting sort of pieces by row, keeping input order inside a row.
    const first = new Int32Array(rows + 1);
    for (let p = 0; p < n; p++) first[rowOf[p] + 1]++;
    for (let r = 0; r < rows; r++) first[r + 1] += first[r];
    const cursor = first.slice(0, rows);
    const members = new Int32Array(n);
    for (let p = 0; p < n; p++) members[cursor[rowOf[p]]++] = p;

    for (let r = 0; r < rows; r++) {
      let fill = 0;
      let segment = 0;
      for (let m = first[r]; m < first[r + 1]; m++) {
        const p = members[m];
        const start = this.pieceStart[p];
        this.tokens.set(this.pool.subarray(start, start + len[p]), fill);
        this.segments.fill(++segment, fill, fill + len[p]);
        this.pieces.push({ doc: this.pieceRef[p], offset: this.pieceOffset[p] });
        fill += len[p];
      }
      this.emit(fill);
    }
    this.count = 0;
    this.pieceRef.length = 0;
    this.pieceOffset.length = 0;
    this.poolFill = 0;
  }
}
