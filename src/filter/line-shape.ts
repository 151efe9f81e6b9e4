// Line-shape rules: the share of lines that start with a bullet, and of lines that end with an ellipsis.
import { field, num, obj, type Schema } from "../pipeline/schema.js";
import { round, type Rule } from "./rule.js";

// Bullet characters. The paper names no list; these are the Unicode bullets and list markers in
// common use, plus "-", "*", "+" and "–" when a space follows (Markdown and plain-text lists).
const BULLET = /^\s*(?:[\u2022\u2023\u25E6\u2043\u2219\u25CF\u25CB\u25AA\u25AB\u25A0\u25A1\u25BA\u25B8\u25B6\u27A2\u27A4]|[-*+\u2013](?=\s))/u;
const ENDS_WITH_ELLIPSIS = /(?:\u2026|\.{3,})$/;

/**
 * bullet_lines: at most `max` of the non-blank lines may start with a bullet. Gopher drops
 * documents with more than 90 % of lines starting with a bullet point (from memory; see gopher.ts): link
 * lists and navigation menus rather than prose.
 */
export const bulletLines: Rule<{ max: number }> = {
  name: "bullet_lines",
  defaults: { max: 0.9 },
  overrides: obj({ max: field(num({ min: 0, max: 1 })) }) as Schema<Partial<{ max: number }>>,
  check(doc, o) {
    const lines = doc.lines;
    if (lines.length === 0) return undefined;
    let n = 0;
    for (const l of lines) if (BULLET.test(l)) n++;
    const share = n / lines.length;
    return share > o.max ? { share: round(share), max: o.max } : undefined;
  },
};

/**
 * ellipsis_lines: at most `max` of the non-blank lines may end with an ellipsis ("…" or "...").
 * Gopher drops documents with more than 30 % of lines ending in an ellipsis (from memory; see gopher.ts):
 * lists of truncated previews.
 */
export const ellipsisLines: Rule<{ max: number }> = {
  name: "ellipsis_lines",
  defaults: { max: 0.3 },
  overrides: obj({ max: field(num({ min: 0, max: 1 })) }) as Schema<Partial<{ max: number }>>,
  check(doc, o) {
    const lines = doc.lines;
    if (lines.length === 0) return undefined;
    let n = 0;
    for (const l of lines) if (ENDS_WITH_ELLIPSIS.test(l)) n++;
    const share = n / lines.length;
    return share > o.max ? { share: round(share), max: o.max } : undefined;
  },
};
