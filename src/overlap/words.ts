// Words for n-gram matching: one normalization shared by decontamination and the overlap figures.

export const WORD_FORMS = ["NFKC", "NFC", "NFKD", "NFD", "none"] as const;
export type WordForm = (typeof WORD_FORMS)[number];

// Format characters (Unicode category Cf: zero-width space and joiners, soft hyphen, BOM, …) are
// invisible, so they are removed before words are cut: "pan\u200Btograph" is the word "pantograph".
const FORMAT = /\p{Cf}/gu;
const HAS_FORMAT = /\p{Cf}/u;
// A word is a run of letters, combining marks and digits; everything else (spaces, punctuation,
// symbols) only separates words. So "wire, and" and "wire and" give the same two words, and case
// does not matter either: matching should not hinge on typography that a copy may have changed.
const WORD = /[\p{L}\p{M}\p{N}]+/gu;
const WORD_CHAR = /^[\p{L}\p{M}\p{N}]$/u;

/** `text` in form `form`, format characters removed, lower-cased: the string whose word runs are the words. */
export function wordText(text: string, form: WordForm = "NFKC"): string {
  let t = form === "none" ? text : text.normalize(form);
  if (HAS_FORMAT.test(t)) t = t.replace(FORMAT, "");
  return t.toLowerCase();
}

/** The words of `text`: Unicode form `form`, format characters removed, lower-cased, cut at non-word characters. */
export function wordsOf(text: string, form: WordForm = "NFKC"): string[] {
  return wordText(text, form).match(WORD) ?? [];
}

// The same test as WORD, per code point, for scanners that cut words without making strings
// (NgramHasher.hashText): a table over the Basic Multilingual Plane built once from the regular
// expression itself, so the two cannot disagree; code points beyond it ask the expression (and are
// remembered).
let bmp: Uint8Array | undefined;
const astral = new Map<number, boolean>();

/** Whether code point `cp` belongs to a word (a letter, combining mark or digit). */
export function isWordCodePoint(cp: number): boolean {
  if (cp < 0x10000) {
    if (!bmp) {
      bmp = new Uint8Array(0x10000);
      for (let c = 0; c < 0x10000; c++) if (c < 0xd800 || c > 0xdfff) bmp[c] = WORD_CHAR.test(String.fromCharCode(c)) ? 1 : 0;
    }
    return bmp[cp] === 1;
  }
  let w = astral.get(cp);
  if (w === undefined) astral.set(cp, (w = WORD_CHAR.test(String.fromCodePoint(cp))));
  return w;
}

/** The BMP table of isWordCodePoint (1: word character), for tight loops. */
export function wordTable(): Uint8Array {
  isWordCodePoint(0);
  return bmp!;
}
