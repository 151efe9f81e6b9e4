// `concat` packing: documents back to back in input order, cut every `length` tokens.
import { RowPacker } from "./packer.js";

/**
 * Documents back to back (each already ends in EOS when the tokenize stage adds it), cut every
 * `length` tokens; a document may continue in the next row, where it starts a new segment (1).
 * Only the last row of a split is padded (segment 0, token = pad id). No padding, but every
 * document that straddles a row edge is cut.
 */
export class ConcatPacker extends RowPacker {
  private fill = 0;
  private segment = 0;

  add(doc: Uint32Array, ref?: unknown): void {
    if (doc.length === 0) return;
    const L = this.length;
    const room = L - this.fill;
    const pieces = doc.length <= room ? 1 : 1 + Math.ceil((doc.length - room) / L);
    this.tally.document(doc.length, pieces, Math.min(doc.length, room));
    let at = 0;
    this.segment++;
    this.pieces.push({ doc: ref, offset: 0 });
    while (at < doc.length) {
      const take = Math.min(L - this.fill, doc.length - at);
      this.tokens.set(doc.subarray(at, at + take), this.fill);
      this.segments.fill(this.segment, this.fill, this.fill + take);
      this.fill += take;
      at += take;
      if (this.fill === L) {
        this.flushRow();
        if (at < doc.length) {
          this.segment = 1;
          this.pieces.push({ doc: ref, offset: at });
        }
      }
    }
  }

  private flushRow(): void {
    this.emit(this.fill);
    this.fill = 0;
    this.segment = 0;
  }

  /** Pads and emits the last partial row, if any. */
  finish(): void {
    if (this.fill > 0) this.flushRow();
  }
}
