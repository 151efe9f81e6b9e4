// Runs the filter on one text: length bounds first, then each switched-on quality rule in order.
import { lengthFailure, type LengthBounds } from "./length.js";
import { RULES, type FilterOptions } from "./options.js";
import type { Detail } from "./rule.js";
import { DocView } from "./units.js";

export interface Failure {
  /** The option key of the failed rule; the ledger reason is `filter:<rule>`. */
  rule: string;
  detail: Detail;
}

/**
 * The first rule the text fails, or undefined if it passes. Rules missing from `o` count as off,
 * so plain length bounds ({ min_words, max_words, min_chars, max_chars }) work on their own.
 */
export function evaluate(text: string, o: LengthBounds & Partial<FilterOptions>): Failure | undefined {
  const short = lengthFailure(text, o);
  if (short) return short;
  const doc = new DocView(text);
  for (const rule of RULES) {
    const limits = (o as unknown as Record<string, unknown>)[rule.name];
    if (!limits) continue;
    const detail = rule.check(doc, limits);
    if (detail) return { rule: rule.name, detail };
  }
  return undefined;
}
