// filter: drops records whose length in words or characters is outside the given bounds.
import { defineStage } from "./stage.js";
import { field, num, obj, refine, type Infer } from "../pipeline/schema.js";

const count = num({ integer: true, min: 0 });
export const filterOptions = refine(
  obj({
    min_words: field(count, { default: 0 }),
    max_words: field(count),
    min_chars: field(count, { default: 1 }),
    max_chars: field(count),
  }),
  (o, path, issues) => {
    if (o.max_words !== undefined && o.max_words < o.min_words)
      issues.push({ path: [...path, "max_words"], message: `max_words (${o.max_words}) is below min_words (${o.min_words})` });
    if (o.max_chars !== undefined && o.max_chars < o.min_chars)
      issues.push({ path: [...path, "max_chars"], message: `max_chars (${o.max_chars}) is below min_chars (${o.min_chars})` });
  },
);
export type FilterOptions = Infer<typeof filterOptions>;

/** Words are maximal runs of non-space characters (common practice for length filters). */
export function countWords(text: string): number {
  let n = 0;
  let inWord = false;
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    const space = c === 32 || (c >= 9 && c <= 13) || c === 0xa0 || c === 0x3000 || (c >= 0x2000 && c <= 0x200a);
    if (space) inWord = false;
    else if (!inWord) {
      inWord = true;
      n++;
    }
  }
  return n;
}

/** Length in code points, without allocating (UTF-16 length minus low surrogates of pairs). */
export function codePoints(text: string): number {
  let n = text.length;
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c >= 0xdc00 && c <= 0xdfff && i > 0) {
      const p = text.charCodeAt(i - 1);
      if (p >= 0xd800 && p <= 0xdbff) n--;
    }
  }
  return n;
}

/** The reason a text fails the filter, or undefined if it passes. Characters are code points. */
export function filterReason(text: string, o: FilterOptions): string | undefined {
  const chars = codePoints(text);
  if (chars < o.min_chars) return "too-few-chars";
  if (o.max_chars !== undefined && chars > o.max_chars) return "too-many-chars";
  const words = countWords(text);
  if (words < o.min_words) return "too-few-words";
  if (o.max_words !== undefined && words > o.max_words) return "too-many-words";
  return undefined;
}

export default defineStage({
  name: "filter",
  summary: "drops records outside word/character length bounds",
  perRecord: true,
  options: filterOptions,
  create(o) {
    return async function* filter(input, ctx) {
      for await (const r of input) {
        const reason = filterReason(r.text, o);
        if (reason) ctx.drop(r, reason);
        else yield r;
      }
    };
  },
});
