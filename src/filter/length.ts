// Length rules: the document's size in words and in characters must lie within bounds.
import { codePoints, countWords } from "./units.js";
import type { Detail } from "./rule.js";

export interface LengthBounds {
  min_words: number;
  max_words?: number;
  min_chars: number;
  max_chars?: number;
}

/** The first bound the text breaks, as the option key naming it, with the measured length. */
export function lengthFailure(text: string, o: LengthBounds): { rule: string; detail: Detail } | undefined {
  const chars = codePoints(text);
  if (chars < o.min_chars) return { rule: "min_chars", detail: { chars, min: o.min_chars } };
  if (o.max_chars !== undefined && chars > o.max_chars) return { rule: "max_chars", detail: { chars, max: o.max_chars } };
  const words = countWords(text);
  if (words < o.min_words) return { rule: "min_words", detail: { words, min: o.min_words } };
  if (o.max_words !== undefined && words > o.max_words) return { rule: "max_words", detail: { words, max: o.max_words } };
  return undefined;
}
