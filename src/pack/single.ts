// `single` packing: one document per row, padded; a longer document is cut into `length`-token chunks, one per row.
import { pieceStarts, RowPacker, type CutEdges } from "./packer.js";

/**
 * The simplest layout a trainer can assume (one document per row, attention never needs a
 * document mask), paid for in padding: every row but full chunks ends in pad tokens.
 */
export class SinglePacker extends RowPacker {
  add(doc: Uint32Array, ref?: unknown, edges?: CutEdges): void {
    if (doc.length === 0) return;
    const L = this.length;
    // Without edges: every L tokens; a conversation's edges keep its pieces to whole turns.
    const starts = pieceStarts(doc.length, L, doc.length > L ? edges : undefined);
    this.tally.document(doc.length, starts.length, starts.length > 1 ? starts[1] : doc.length);
    for (let k = 0; k < starts.length; k++) {
      const at = starts[k];
      const take = (k + 1 < starts.length ? starts[k + 1] : doc.length) - at;
      this.tokens.set(doc.subarray(at, at + take), 0);
      this.segments.fill(1, 0, take);
      this.pieces.push({ doc: ref, offset: at });
      this.emit(take);
    }
  }

  finish(): void {
    // Nothing is buffered: every row is emitted as soon as its document arrives.
  }
}
