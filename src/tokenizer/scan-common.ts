// Shared pieces of the hand-written pre-token scanners: code point access and class tests.

import { LL, LM, LO, LT, LU, MARK, NUM, OTHER, WS } from "./unicode-classes.js";

/**
 * A scanner returns the end (exclusive, in UTF-16 units) of the pre-token that starts at `i`
 * (i < text.length), given the class table. Every position starts a pre-token for the patterns we
 * scan by hand, so the caller just loops i = scan(text, i, cls).
 */
export type Scanner = (text: string, i: number, cls: Uint8Array) => number;

/** Code point at i; a lone surrogate is returned as itself (its class is OTHER, like U+FFFD). */
export function codePointAt(text: string, i: number): number {
  const c = text.charCodeAt(i);
  if (c >= 0xd800 && c <= 0xdbff && i + 1 < text.length) {
    const d = text.charCodeAt(i + 1);
    if (d >= 0xdc00 && d <= 0xdfff) return 0x10000 + ((c - 0xd800) << 10) + (d - 0xdc00);
  }
  return c;
}

/** UTF-16 length of code point cp. */
export function width(cp: number): number {
  return cp > 0xffff ? 2 : 1;
}

export function isLetter(k: number): boolean {
  return k >= LU && k <= LO;
}

/** [^\s\p{L}\p{N}]: symbols, punctuation, controls, unassigned, and marks. */
export function isOther(k: number): boolean {
  return k === OTHER || k === MARK;
}

/** [\p{Lu}\p{Lt}\p{Lm}\p{Lo}\p{M}] */
export function isUpperish(k: number): boolean {
  return k === LU || k === LT || k === LM || k === LO || k === MARK;
}

/** [\p{Ll}\p{Lm}\p{Lo}\p{M}] */
export function isLowerish(k: number): boolean {
  return k === LL || k === LM || k === LO || k === MARK;
}

/** End of the White_Space run from i (all White_Space characters are single UTF-16 units). */
export function spaceRunEnd(text: string, i: number, cls: Uint8Array): number {
  const n = text.length;
  while (i < n && cls[text.charCodeAt(i)] === WS) i++;
  return i;
}

/** `\s+(?!\S)|\s+` at i, where text[i] is White_Space and the run ends at `end`. */
export function trailingSpaceEnd(text: string, i: number, end: number): number {
  // Greedy \s+ then "not followed by non-space": the whole run at end of text, else all but the
  // last character (which then leads the next pre-token); a single character matches \s+ alone.
  if (end === text.length) return end;
  return end - i >= 2 ? end - 1 : end;
}

/** Lower-cases for the (?i:'s|'t|...) contractions; U+017F (long s) folds to s. */
export function foldContraction(c: number): number {
  if (c >= 65 && c <= 90) return c + 32;
  return c === 0x17f ? 115 : c;
}

/**
 * End of a contraction ('s 't 're 've 'm 'll 'd) starting at i, or -1. `fold` maps each following
 * character first (identity for the case-sensitive GPT-2 pattern).
 */
export function contractionEnd(text: string, i: number, fold: (c: number) => number): number {
  const n = text.length;
  if (i + 1 >= n || text.charCodeAt(i) !== 39) return -1;
  const c1 = fold(text.charCodeAt(i + 1));
  if (c1 === 115 || c1 === 116 || c1 === 109 || c1 === 100) return i + 2; // s t m d
  if (i + 2 >= n) return -1;
  const c2 = fold(text.charCodeAt(i + 2));
  if ((c1 === 114 && c2 === 101) || (c1 === 118 && c2 === 101) || (c1 === 108 && c2 === 108)) return i + 3; // re ve ll
  return -1;
}

export function identity(c: number): number {
  return c;
}

/** End of `\p{N}{1,3}` starting at i (whose first code point, of width w0, is a number). */
export function digitsEnd(text: string, i: number, w0: number, cls: Uint8Array): number {
  const n = text.length;
  let e = i + w0;
  for (let count = 1; count < 3 && e < n; count++) {
    const c = codePointAt(text, e);
    if (cls[c] !== NUM) break;
    e += width(c);
  }
  return e;
}

/**
 * End of ` ?[^\s\p{L}\p{N}]+` followed by any run of the code units in `trailing` (CR, LF, and
 * for o200k also "/"), or -1 when the text at i does not start such a piece.
 */
export function symbolsEnd(text: string, i: number, c0: number, k0: number, cls: Uint8Array, trailing: (c: number) => boolean): number {
  const n = text.length;
  let e = -1;
  if (isOther(k0)) e = i;
  else if (c0 === 32 && i + 1 < n && isOther(cls[codePointAt(text, i + 1)])) e = i + 1;
  if (e < 0) return -1;
  while (e < n) {
    const c = codePointAt(text, e);
    if (!isOther(cls[c])) break;
    e += width(c);
  }
  while (e < n && trailing(text.charCodeAt(e))) e++;
  return e;
}

/** Only White_Space is left: `\s*[\r\n]+` through the last CR/LF of the run, else the space rules. */
export function whitespaceEnd(text: string, i: number, cls: Uint8Array): number {
  const end = spaceRunEnd(text, i, cls);
  for (let p = end - 1; p >= i; p--) {
    const c = text.charCodeAt(p);
    if (c === 10 || c === 13) return p + 1;
  }
  return trailingSpaceEnd(text, i, end);
}
