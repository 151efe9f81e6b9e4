// `single` packing: one document per row, padded; a longer document is cut into `length`-token chunks, one per row.
import { RowPacker } from "./packer.js";

/**
 * The simplest layout a trainer can assume (one document per row, attention never needs a
 * document mask), paid for in padding: every row but full chunks ends in pad tokens.
 */
export class SinglePacker extends RowPacker {
  add(doc: Uint32Array, ref?: unknown): void {
    if (doc.length === 0) return;
    const L = this.length;
    this.tally.document(doc.length, Math.ceil(doc.length / L), Math.min(doc.length, L));
    for (let at = 0; at < doc.length; at += L) {
      const take = Math.min(L, doc.length - at);
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
