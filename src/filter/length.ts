// Length rules: the document's size in words and in characters must lie within bounds.
import { codePoints, countWords, isSpaceless, segmentWords } from "./units.js";
import type { Detail } from "./rule.js";

export interface LengthBounds {
  min_words: number;
  max_words?: number;
  min_chars: number;
  max_chars?: number;
}

/** The first bound the text breaks, as the option key naming it, with the measured length. */
/** `spaceless`: whether the text is written without spaces, when the caller knows it already. */
export function lengthFailure(text: string, o: LengthBounds, language?: string, spaceless?: () => boolean): { rule: string; detail: Detail } | undefined {
  const chars = codePoints(text);
  if (chars < o.min_chars) return { rule: "min_chars", detail: { chars, min: o.min_chars } };
  if (o.max_chars !== undefined && chars > o.max_chars) return { rule: "max_chars", detail: { chars, max: o.max_chars } };
  if (o.min_words === 0 && o.max_words === undefined) return undefined;
  // Text written without spaces is one "word" per sentence by whitespace: its words are counted as ICU's word segments.
  const segmented = spaceless ? spaceless() : isSpaceless(text);
  const words = segmented ? segmentWords(text, language).length : countWords(text);
  const how = segmented ? { counted: "word segments" } : {};
  if (words < o.min_words) return { rule: "min_words", detail: { words, min: o.min_words, ...how } };
  if (o.max_words !== undefined && words > o.max_words) return { rule: "max_words", detail: { words, max: o.max_words, ...how } };
  return undefined;
}
