// The character classes the pre-tokenizer patterns need, as one byte per code point (Unicode 16.0).

import { CLASS_RUNS } from "./unicode-data.js";

// Class numbers. The letters are contiguous (LU..LO) so "is a letter" is one range test.
// White_Space follows Unicode's property (as the reference's regex engine does), not JavaScript's
// \s: it includes U+0085 and excludes U+FEFF.
export const OTHER = 0;
export const LU = 1; // Lu
export const LT = 2; // Lt
export const LL = 3; // Ll
export const LM = 4; // Lm
export const LO = 5; // Lo
export const MARK = 6; // Mn, Mc, Me
export const NUM = 7; // Nd, Nl, No
export const WS = 8; // White_Space
export const CLASS_COUNT = 9;

export const MAX_CODE_POINT = 0x10ffff;

let table: Uint8Array | undefined;

/**
 * Class of every code point, indexed by code point (1.1 MB, built once). Surrogate code points are
 * OTHER: a lone surrogate reaches the reference as U+FFFD, which is a symbol (OTHER) too.
 */
export function classTable(): Uint8Array {
  if (table !== undefined) return table;
  const t = new Uint8Array(MAX_CODE_POINT + 1);
  let cp = 0;
  let i = 0;
  while (i < CLASS_RUNS.length) {
    const cls = CLASS_RUNS.charCodeAt(i) - 65;
    let j = i + 1;
    while (j < CLASS_RUNS.length && !isRunStart(CLASS_RUNS.charCodeAt(j))) j++;
    const len = parseInt(CLASS_RUNS.slice(i + 1, j), 36);
    if (cls < 0 || cls >= CLASS_COUNT || !(len > 0)) throw new Error(`corrupt Unicode class table at offset ${i}`);
    if (cls !== OTHER) t.fill(cls, cp, cp + len);
    cp += len;
    i = j;
  }
  if (cp !== MAX_CODE_POINT + 1) throw new Error(`Unicode class table covers ${cp} code points, expected ${MAX_CODE_POINT + 1}`);
  table = t;
  return t;
}

function isRunStart(c: number): boolean {
  return c >= 65 && c <= 90;
}

/** Inclusive code point ranges whose class is in `classes`, in ascending order. */
export function rangesOf(classes: readonly number[]): Array<[number, number]> {
  const t = classTable();
  const want = new Uint8Array(CLASS_COUNT);
  for (const c of classes) want[c] = 1;
  const out: Array<[number, number]> = [];
  let cp = 0;
  while (cp <= MAX_CODE_POINT) {
    if (!want[t[cp]]) {
      cp++;
      continue;
    }
    const start = cp;
    while (cp <= MAX_CODE_POINT && want[t[cp]]) cp++;
    out.push([start, cp - 1]);
  }
  return out;
}
