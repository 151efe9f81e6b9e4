// Hand-written scanner for the o200k_base pre-tokenizer pattern (faster than the regex, proven equal in tests).
//
//   [^\r\n\p{L}\p{N}]?[\p{Lu}\p{Lt}\p{Lm}\p{Lo}\p{M}]*[\p{Ll}\p{Lm}\p{Lo}\p{M}]+(?i:'s|'t|'re|'ve|'m|'ll|'d)?
//  |[^\r\n\p{L}\p{N}]?[\p{Lu}\p{Lt}\p{Lm}\p{Lo}\p{M}]+[\p{Ll}\p{Lm}\p{Lo}\p{M}]*(?i:'s|'t|'re|'ve|'m|'ll|'d)?
//  |\p{N}{1,3}| ?[^\s\p{L}\p{N}]+[\r\n/]*|\s*[\r\n]+|\s+(?!\S)|\s+
//
// Call U = [\p{Lu}\p{Lt}\p{Lm}\p{Lo}\p{M}] and W = [\p{Ll}\p{Lm}\p{Lo}\p{M}]; U and W share Lm, Lo
// and marks. A mark is also a valid lead character, since marks are not letters.

import { LL, NUM } from "./unicode-classes.js";
import {
  digitsEnd,
  symbolsEnd,
  whitespaceEnd,
  codePointAt,
  contractionEnd,
  foldContraction,
  isLetter,
  isLowerish,
  isUpperish,
  width,
} from "./scan-common.js";

/**
 * U*W+ from s, with the regex's backtracking: take the maximal U run; if an Ll follows, W+ runs on
 * from there; otherwise W+ is the last W character inside the U run (the engine gives back U
 * characters until W+ can match). -1 when neither is possible.
 */
function upperThenLower(text: string, s: number, cls: Uint8Array): number {
  const n = text.length;
  let u = s;
  let lastLowerEnd = -1;
  while (u < n) {
    const c = codePointAt(text, u);
    const k = cls[c];
    if (!isUpperish(k)) {
      if (k !== LL) break;
      let e = u + width(c);
      while (e < n) {
        const d = codePointAt(text, e);
        if (!isLowerish(cls[d])) break;
        e += width(d);
      }
      return e;
    }
    u += width(c);
    if (isLowerish(k)) lastLowerEnd = u;
  }
  return lastLowerEnd;
}

/** U+W* from s (s starts with a U character). */
function upperRun(text: string, s: number, cls: Uint8Array): number {
  const n = text.length;
  let e = s;
  while (e < n) {
    const c = codePointAt(text, e);
    if (!isUpperish(cls[c])) break;
    e += width(c);
  }
  while (e < n) {
    const c = codePointAt(text, e);
    if (!isLowerish(cls[c])) break;
    e += width(c);
  }
  return e;
}

function withContraction(text: string, e: number): number {
  if (e < text.length && text.charCodeAt(e) === 39) {
    const c = contractionEnd(text, e, foldContraction);
    if (c >= 0) return c;
  }
  return e;
}

export function scanO200k(text: string, i: number, cls: Uint8Array): number {
  const n = text.length;
  const c0 = text.charCodeAt(i);
  const cp0 = c0 < 0xd800 ? c0 : codePointAt(text, i);
  const k0 = cls[cp0];
  const w0 = width(cp0);
  const canLead = !isLetter(k0) && k0 !== NUM && c0 !== 10 && c0 !== 13;

  // Alternative 1, with the optional lead character, then without it.
  if (canLead && i + w0 < n) {
    const e = upperThenLower(text, i + w0, cls);
    if (e >= 0) return withContraction(text, e);
  }
  const e1 = upperThenLower(text, i, cls);
  if (e1 >= 0) return withContraction(text, e1);

  // Alternative 2, likewise.
  if (canLead && i + w0 < n && isUpperish(cls[codePointAt(text, i + w0)])) return withContraction(text, upperRun(text, i + w0, cls));
  if (isUpperish(k0)) return withContraction(text, upperRun(text, i, cls));

  // \p{N}{1,3}
  if (k0 === NUM) return digitsEnd(text, i, w0, cls);

  //  ?[^\s\p{L}\p{N}]+[\r\n/]*
  const e = symbolsEnd(text, i, c0, k0, cls, isLineBreakOrSlash);
  if (e >= 0) return e;

  return whitespaceEnd(text, i, cls);
}

/** The code units that may trail a run of symbols in this pattern: CR, LF and "/". */
function isLineBreakOrSlash(c: number): boolean {
  return c === 10 || c === 13 || c === 47;
}
