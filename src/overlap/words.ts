// Words for n-gram matching: one normalization shared by decontamination and the overlap figures.

export const WORD_FORMS = ["NFKC", "NFC", "NFKD", "NFD", "none"] as const;
export type WordForm = (typeof WORD_FORMS)[number];

// Format characters (Unicode category Cf: zero-width space and joiners, soft hyphen, BOM, …) are
// invisible, so they are removed before words are cut: "pan\u200Btograph" is the word "pantograph".
const FORMAT = /\p{Cf}/gu;
// A word is a run of letters, combining marks and digits; everything else (spaces, punctuation,
// symbols) only separates words. So "wire, and" and "wire and" give the same two words, and case
// does not matter either: matching should not hinge on typography that a copy may have changed.
const WORD = /[\p{L}\p{M}\p{N}]+/gu;

/** The words of `text`: Unicode form `form`, format characters removed, lower-cased, cut at non-word characters. */
export function wordsOf(text: string, form: WordForm = "NFKC"): string[] {
  let t = form === "none" ? text : text.normalize(form);
  t = t.replace(FORMAT, "").toLowerCase();
  return t.match(WORD) ?? [];
}
