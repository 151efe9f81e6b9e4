// Repetition rules: duplicated lines and duplicated paragraphs inside one document.
import { field, num, obj, type Schema } from "../pipeline/schema.js";
import { codePoints } from "./units.js";
import { round, type Rule } from "./rule.js";

/**
 * The share of items that repeat an earlier item of the same document, and the share of the
 * characters (code points) in those repeats. The first occurrence is not counted, only the
 * repeats: a document that says one thing twice is half duplicate. Items are compared with
 * surrounding whitespace removed.
 */
export function duplicateShares(items: readonly string[]): { items: number; chars: number } {
  const seen = new Set<string>();
  let repeats = 0;
  let repeatChars = 0;
  let chars = 0;
  for (const raw of items) {
    const item = raw.trim();
    const n = codePoints(item);
    chars += n;
    if (seen.has(item)) {
      repeats++;
      repeatChars += n;
    } else seen.add(item);
  }
  return { items: items.length === 0 ? 0 : repeats / items.length, chars: chars === 0 ? 0 : repeatChars / chars };
}

export interface LineLimits {
  max_lines: number;
  max_chars: number;
}
export interface ParagraphLimits {
  max_paragraphs: number;
  max_chars: number;
}

const fraction = () => field(num({ min: 0, max: 1 }));

/**
 * duplicate_lines: at most `max_lines` of the non-blank lines may repeat an earlier line, and at
 * most `max_chars` of the characters may sit in such repeats. Gopher table A1 (from memory; see gopher.ts):
 * duplicate line fraction 0.30, duplicate line character fraction 0.20. Catches navigation,
 * cookie banners and log spam repeated inside a page.
 */
export const duplicateLines: Rule<LineLimits> = {
  name: "duplicate_lines",
  defaults: { max_lines: 0.3, max_chars: 0.2 },
  overrides: obj({ max_lines: fraction(), max_chars: fraction() }) as Schema<Partial<LineLimits>>,
  check(doc, o) {
    const s = duplicateShares(doc.lines);
    if (s.items > o.max_lines) return { lines: round(s.items), max_lines: o.max_lines };
    if (s.chars > o.max_chars) return { chars: round(s.chars), max_chars: o.max_chars };
    return undefined;
  },
};

/**
 * duplicate_paragraphs: the same for paragraphs (blocks separated by blank lines). Gopher table
 * A1 (from memory; see gopher.ts): duplicate paragraph fraction 0.30, duplicate paragraph character fraction 0.20.
 */
export const duplicateParagraphs: Rule<ParagraphLimits> = {
  name: "duplicate_paragraphs",
  defaults: { max_paragraphs: 0.3, max_chars: 0.2 },
  overrides: obj({ max_paragraphs: fraction(), max_chars: fraction() }) as Schema<Partial<ParagraphLimits>>,
  check(doc, o) {
    const s = duplicateShares(doc.paragraphs);
    if (s.items > o.max_paragraphs) return { paragraphs: round(s.items), max_paragraphs: o.max_paragraphs };
    if (s.chars > o.max_chars) return { chars: round(s.chars), max_chars: o.max_chars };
    return undefined;
  },
};
