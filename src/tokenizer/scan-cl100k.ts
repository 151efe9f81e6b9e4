// Hand-written scanner for the cl100k_base pre-tokenizer pattern (faster than the regex, proven equal in tests).
//
//   (?i:'s|'t|'re|'ve|'m|'ll|'d)|[^\r\n\p{L}\p{N}]?\p{L}+|\p{N}{1,3}| ?[^\s\p{L}\p{N}]+[\r\n]*|\s*[\r\n]+|\s+(?!\S)|\s+

import { NUM } from "./unicode-classes.js";
import { codePointAt, contractionEnd, foldContraction, isLetter, isOther, spaceRunEnd, trailingSpaceEnd, width } from "./scan-common.js";

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
  if (k0 === NUM) {
    let e = i + w0;
    for (let count = 1; count < 3 && e < n; count++) {
      const c = codePointAt(text, e);
      if (cls[c] !== NUM) break;
      e += width(c);
    }
    return e;
  }

  //  ?[^\s\p{L}\p{N}]+[\r\n]*
  let j = -1;
  if (isOther(k0)) j = i;
  else if (c0 === 32 && i + 1 < n && isOther(cls[codePointAt(text, i + 1)])) j = i + 1;
  if (j >= 0) {
    let e = j;
    while (e < n) {
      const c = codePointAt(text, e);
      if (!isOther(cls[c])) break;
      e += width(c);
    }
    while (e < n && (text.charCodeAt(e) === 10 || text.charCodeAt(e) === 13)) e++;
    return e;
  }

  // Only White_Space is left. \s*[\r\n]+ : through the last CR/LF of the run, if any.
  const end = spaceRunEnd(text, i, cls);
  for (let p = end - 1; p >= i; p--) {
    const c = text.charCodeAt(p);
    if (c === 10 || c === 13) return p + 1;
  }
  return trailingSpaceEnd(text, i, end);
}

