// Hand-written scanner for the cl100k_base pre-tokenizer pattern (faster than the regex, proven equal in tests).
//
//   (?i:'s|'t|'re|'ve|'m|'ll|'d)|[^\r\n\p{L}\p{N}]?\p{L}+|\p{N}{1,3}| ?[^\s\p{L}\p{N}]+[\r\n]*|\s*[\r\n]+|\s+(?!\S)|\s+

import { NUM } from "./unicode-classes.js";
import { codePointAt, contractionEnd, digitsEnd, foldContraction, isLetter, symbolsEnd, whitespaceEnd, width } from "./scan-common.js";

export function scanCl100k(text: string, i: number, cls: Uint8Array): number {
  const n = text.length;
  const c0 = text.charCodeAt(i);
  if (c0 === 39) {
    const e = contractionEnd(text, i, foldContraction);
    if (e >= 0) return e;
  }
  const cp0 = c0 < 0xd800 ? c0 : codePointAt(text, i);
  const k0 = cls[cp0];
  const w0 = width(cp0);

  // [^\r\n\p{L}\p{N}]?\p{L}+ : one optional non-letter, non-digit, non-CR/LF lead, then letters.
  let letters = -1;
  if (isLetter(k0)) letters = i;
  else if (k0 !== NUM && c0 !== 10 && c0 !== 13 && i + w0 < n && isLetter(cls[codePointAt(text, i + w0)])) letters = i + w0;
  if (letters >= 0) {
    let e = letters;
    while (e < n) {
      const c = codePointAt(text, e);
      if (!isLetter(cls[c])) break;
      e += width(c);
    }
    return e;
  }

  // \p{N}{1,3}
  if (k0 === NUM) return digitsEnd(text, i, w0, cls);

  //  ?[^\s\p{L}\p{N}]+[\r\n]*
  const e = symbolsEnd(text, i, c0, k0, cls, isLineBreak);
  if (e >= 0) return e;

  return whitespaceEnd(text, i, cls);
}


/** The code units that may trail a run of symbols in this pattern: CR and LF. */
function isLineBreak(c: number): boolean {
  return c === 10 || c === 13;
}
