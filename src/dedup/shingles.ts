// Shingles: a document's word or character n-grams, each hashed once with XXH32, into a reused buffer.
import { deriveSeed, xxh32, xxh32Lanes, xxh32Windows } from "./xxh32.js";

export interface ShingleSpec {
  /** word: n consecutive words; char: n consecutive characters (code points). */
  kind: "word" | "char";
  ngram: number;
  lowercase: boolean;
}

/** Byte classes: 0 separates words (ASCII other than letters and digits), 1 is part of a word (ASCII letters and digits), 2 starts a multi-byte character (see isSeparator). */
const CLASS = new Uint8Array(256);
for (let c = 0; c < 256; c++) CLASS[c] = c >= 0x80 ? 2 : /[0-9A-Za-z]/.test(String.fromCharCode(c)) ? 1 : 0;

/**
 * Whether the UTF-8 sequence starting with b0 b1 b2 is a separator rather than part of a word.
 * Chosen blocks: U+0080–U+00BF (C1 controls, no-break space, Latin-1 punctuation and signs), × and ÷,
 * U+2000–U+207F (typographic spaces, dashes, quotes, bullets, ellipsis), U+3000–U+303F (CJK spaces
 * and punctuation) and the byte order mark. Every other non-ASCII character counts as a letter, so
 * accented and non-Latin words stay whole; scripts written without spaces become one long "word"
 * and are better served by character shingles.
 */
function isSeparator(b0: number, b1: number, b2: number): boolean {
  if (b0 === 0xc2) return true;
  if (b0 === 0xc3) return b1 === 0x97 || b1 === 0xb7;
  if (b0 === 0xe2) return b1 === 0x80 || b1 === 0x81;
  if (b0 === 0xe3) return b1 === 0x80;
  if (b0 === 0xef) return b1 === 0xbb && b2 === 0xbf;
  return false;
}

/** Whitespace for character shingles: ASCII space and controls \t\n\v\f\r, NBSP, U+2000–U+200A, U+2028/9, U+202F, U+205F, U+3000. */
function spaceLength(b: Uint8Array, i: number): number {
  const b0 = b[i];
  if (b0 === 0x20 || (b0 >= 0x09 && b0 <= 0x0d)) return 1;
  if (b0 === 0xc2 && b[i + 1] === 0xa0) return 2;
  if (b0 === 0xe2) {
    const b1 = b[i + 1];
    const b2 = b[i + 2];
    if (b1 === 0x80 && (b2 <= 0x8a || b2 === 0xa8 || b2 === 0xa9 || b2 === 0xaf)) return 3;
    if (b1 === 0x81 && b2 === 0x9f) return 3;
  }
  if (b0 === 0xe3 && b[i + 1] === 0x80 && b[i + 2] === 0x80) return 3;
  return 0;
}

function seqLength(b0: number): number {
  return b0 >= 0xf0 ? 4 : b0 >= 0xe0 ? 3 : b0 >= 0xc0 ? 2 : 1;
}

const encoder = new TextEncoder();

/**
 * Turns texts into shingle hashes. One instance per thread: the buffers are reused from document
 * to document, so shingling allocates nothing per shingle (only the lower-cased string per text).
 *
 * Word shingles: words are maximal runs of word characters (see isSeparator) in the UTF-8 text; each
 * word is hashed once (XXH32 of its bytes), and a shingle's hash is XXH32 of its n word hashes, so
 * spacing and punctuation between words do not change a shingle. Character shingles: runs of
 * whitespace become one space, leading and trailing whitespace is dropped, and each window of n code
 * points is hashed once (XXH32 of its bytes).
 *
 * A text with fewer than n words (characters) has no shingle. It is marked `short`, and `keyA`/`keyB`
 * hold a 64-bit fingerprint of its normalized content (its words, or for a text without any word
 * its bytes), so such texts can still be matched as exact duplicates of each other.
 */
export class Shingler {
  readonly spec: ShingleSpec;
  /** Shingle hashes of the last text, valid in [0, count). */
  hashes = new Uint32Array(1024);
  count = 0;
  short = false;
  keyA = 0;
  keyB = 0;
  private bytes = new Uint8Array(4096);
  private words = new Uint32Array(1024);
  private starts = new Int32Array(1024);
  private readonly wordSeed: number;
  private readonly shingleSeed: number;
  private readonly keySeeds: number[];

  constructor(spec: ShingleSpec, seed: number) {
    if (!Number.isInteger(spec.ngram) || spec.ngram < 1) throw new RangeError(`ngram must be a positive integer, got ${spec.ngram}`);
    this.spec = spec;
    this.wordSeed = deriveSeed(seed, 1);
    this.shingleSeed = deriveSeed(seed, 2);
    this.keySeeds = [3, 4, 5, 6].map((p) => deriveSeed(seed, p));
  }

  /** Shingles `text`; returns the number of shingle hashes now in `hashes`. */
  shingle(text: string): number {
    // toLowerCase is native and, measured, cheaper than any byte loop over the encoded text in JavaScript.
    const t = this.spec.lowercase ? text.toLowerCase() : text;
    if (this.bytes.length < 3 * t.length + 4) this.bytes = new Uint8Array(3 * t.length + 4096);
    const n = encoder.encodeInto(t, this.bytes).written;
    return this.spec.kind === "word" ? this.wordShingles(n) : this.charShingles(n);
  }

  private ensure(words: number): void {
    if (this.words.length < words) this.words = new Uint32Array(words + 1024);
    if (this.hashes.length < words) this.hashes = new Uint32Array(words + 1024);
  }

  private wordShingles(n: number): number {
    const b = this.bytes;
    this.ensure((n >> 1) + 2);
    const words = this.words;
    const seed = this.wordSeed;
    let nw = 0;
    let i = 0;
    while (i < n) {
      // Skip to the next word character, then to the end of the word.
      for (;;) {
        if (i >= n) break;
        const c = CLASS[b[i]];
        if (c === 1) break;
        if (c === 0) i++;
        else if (isSeparator(b[i], b[i + 1], b[i + 2])) i += seqLength(b[i]);
        else break;
      }
      if (i >= n) break;
      const start = i;
      for (;;) {
        if (i >= n) break;
        const c = CLASS[b[i]];
        if (c === 1) i++;
        else if (c === 0) break;
        else if (isSeparator(b[i], b[i + 1], b[i + 2])) break;
        else i += seqLength(b[i]);
      }
      words[nw++] = xxh32(b, start, i, seed);
    }

    const g = this.spec.ngram;
    if (nw < g) {
      this.short = true;
      this.count = 0;
      if (nw > 0) {
        this.keyA = xxh32Lanes(words, 0, nw, this.keySeeds[0]);
        this.keyB = xxh32Lanes(words, 0, nw, this.keySeeds[1]);
      } else {
        this.keyA = xxh32(b, 0, n, this.keySeeds[2]);
        this.keyB = xxh32(b, 0, n, this.keySeeds[3]);
      }
      return 0;
    }
    this.short = false;
    const count = nw - g + 1;
    xxh32Windows(words, count, g, this.shingleSeed, this.hashes);
    this.count = count;
    return count;
  }

  private charShingles(n: number): number {
    const b = this.bytes;
    // Collapse whitespace in place (the output never runs ahead of the input) and note where each code point starts.
    if (this.starts.length < n + 2) this.starts = new Int32Array(n + 1024);
    const starts = this.starts;
    let w = 0;
    let cps = 0;
    let pendingSpace = false;
    let i = 0;
    while (i < n) {
      const sp = spaceLength(b, i);
      if (sp > 0) {
        pendingSpace = cps > 0;
        i += sp;
        continue;
      }
      if (pendingSpace) {
        starts[cps++] = w;
        b[w++] = 0x20;
        pendingSpace = false;
      }
      const len = seqLength(b[i]);
      starts[cps++] = w;
      for (let j = 0; j < len && i < n; j++) b[w++] = b[i++];
    }
    starts[cps] = w;

    const g = this.spec.ngram;
    if (cps < g) {
      this.short = true;
      this.count = 0;
      this.keyA = xxh32(b, 0, w, this.keySeeds[2]);
      this.keyB = xxh32(b, 0, w, this.keySeeds[3]);
      return 0;
    }
    this.short = false;
    const count = cps - g + 1;
    this.ensure(count);
    const out = this.hashes;
    for (let s = 0; s < count; s++) out[s] = xxh32(b, starts[s], starts[s + g], this.shingleSeed);
    this.count = count;
    return count;
  }
}

/** The sorted distinct shingle hashes of a text: the set that exact Jaccard is computed on. */
export function shingleSet(shingler: Shingler, text: string): Uint32Array {
  const count = shingler.shingle(text);
  const sorted = shingler.hashes.slice(0, count).sort();
  let u = 0;
  for (let i = 0; i < sorted.length; i++) if (i === 0 || sorted[i] !== sorted[u - 1]) sorted[u++] = sorted[i];
  return sorted.slice(0, u);
}

/** Exact Jaccard similarity |A ∩ B| / |A ∪ B| of two sorted distinct sets (1 for two empty sets). */
export function jaccard(a: Uint32Array, b: Uint32Array): number {
  if (a.length === 0 && b.length === 0) return 1;
  let i = 0;
  let j = 0;
  let both = 0;
  while (i < a.length && j < b.length) {
    if (a[i] === b[j]) {
      both++;
      i++;
      j++;
    } else if (a[i] < b[j]) i++;
    else j++;
  }
  return both / (a.length + b.length - both);
}
