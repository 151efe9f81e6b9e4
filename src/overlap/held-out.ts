// One held-out split's documents as n-gram slots and text fingerprints, with "seen in train" marks.
import { bytes, int32s, uint32s } from "../lib/grow.js";
import { HashMap64 } from "./hash-map64.js";
import { ngramCounts } from "./figures.js";

/**
 * Memory: 4 bytes per n-gram position and 28–46 bytes per distinct n-gram (the table's 19–37 plus
 * the key and its mark), 4 per document, and the same per distinct text. Held-out splits are small
 * next to train, whose n-grams are never held here.
 */
export class HeldOutSplit {
  /** Distinct n-gram → slot number. */
  readonly grams = new HashMap64();
  readonly slotHi = uint32s();
  readonly slotLo = uint32s();
  /** Per slot: 1 once the n-gram has been seen in train. */
  readonly slotInTrain = bytes();
  /** Slot of every n-gram position, document after document; document d has positions[docStart[d], docStart[d+1]). */
  readonly positions = int32s();
  readonly docStart = int32s();
  /** Distinct text fingerprint → class; per class, 1 once a train document had the same text. */
  readonly texts = new HashMap64();
  readonly textHi = uint32s();
  readonly textLo = uint32s();
  readonly textInTrain = bytes();
  readonly docText = int32s();

  constructor(readonly name: string) {
    this.docStart.push(0);
  }

  get documents(): number {
    return this.docText.length;
  }

  /** Adds a document: its n-gram hashes hi/lo[0, count) and its text fingerprint; `inTrain` answers for keys train has already shown. */
  addDocument(hi: Uint32Array, lo: Uint32Array, count: number, textHi: number, textLo: number, inTrain: (hi: number, lo: number) => boolean): void {
    for (let i = 0; i < count; i++) {
      const fresh = this.slotHi.length;
      const slot = this.grams.setIfAbsent(hi[i], lo[i], fresh);
      if (slot === fresh) {
        this.slotHi.push(hi[i]);
        this.slotLo.push(lo[i]);
        this.slotInTrain.push(inTrain(hi[i], lo[i]) ? 1 : 0);
      }
      this.positions.push(slot);
    }
    this.docStart.push(this.positions.length);
    const fresh = this.textHi.length;
    const cls = this.texts.setIfAbsent(textHi, textLo, fresh);
    if (cls === fresh) {
      this.textHi.push(textHi);
      this.textLo.push(textLo);
      this.textInTrain.push(inTrain(textHi, textLo) ? 1 : 0);
    }
    this.docText.push(cls);
  }

  /** A train document's n-grams and text fingerprint: marks the slots and text class they match. */
  markTrain(hi: Uint32Array, lo: Uint32Array, count: number, textHi: number, textLo: number): void {
    for (let i = 0; i < count; i++) {
      const slot = this.grams.get(hi[i], lo[i]);
      if (slot >= 0) this.slotInTrain.set(slot, 1);
    }
    const cls = this.texts.get(textHi, textLo);
    if (cls >= 0) this.textInTrain.set(cls, 1);
  }
}

export interface NgramFigures {
  /** Documents of the held-out split. */
  documents: number;
  /** Held-out documents with fewer words than one n-gram (they cannot share one). */
  short_documents: number;
  /** Held-out documents whose text (after the pipeline's stages) equals a reference document's. */
  exact_duplicates: number;
  /** Held-out documents sharing at least one n-gram with the reference split. */
  ngram_documents: number;
  ngram_document_fraction: number;
  /** N-gram positions in the held-out split, and how many of them occur in the reference split. */
  ngrams: number;
  ngrams_seen: number;
  ngram_fraction: number;
}

/** Figures of `b` against a reference whose membership tests are `slotSeen` (per slot of b) and `textSeen` (per text class of b). */
export function ngramFigures(b: HeldOutSplit, slotSeen: (slot: number) => boolean, textSeen: (cls: number) => boolean): NgramFigures {
  const docs = b.documents;
  let short = 0;
  let exact = 0;
  let sharing = 0;
  let seen = 0;
  const pos = b.positions.view();
  for (let d = 0; d < docs; d++) {
    const from = b.docStart.get(d);
    const to = b.docStart.get(d + 1);
    if (from === to) short++;
    let any = false;
    for (let i = from; i < to; i++) {
      if (slotSeen(pos[i])) {
        seen++;
        any = true;
      }
    }
    if (any) sharing++;
    if (textSeen(b.docText.get(d))) exact++;
  }
  return ngramCounts({ documents: docs, short, exact, sharing, ngrams: pos.length, seen });
}
