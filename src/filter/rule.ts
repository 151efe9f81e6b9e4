// What every quality rule provides: its option key, its default thresholds, the option schema and the check.
import type { Issue, Path, Schema } from "../pipeline/schema.js";
import type { DocView } from "./units.js";

/** Why a document failed a rule: the measured value(s) and the limit, written to the ledger line. */
export type Detail = Record<string, unknown>;

export interface Rule<O extends object> {
  /** The option key in `filter: {…}` and the ledger reason `filter:<name>`. */
  name: string;
  /** The thresholds used when the rule is switched on without its own values. */
  defaults: O;
  /** Validates the user's values for this rule (a mapping of overrides, every key optional). */
  overrides: Schema<Partial<O>>;
  /** Cross-key checks on the merged thresholds (e.g. min ≤ max). */
  validate?(o: O, path: Path, issues: Issue[]): void;
  /** undefined when the document passes, else what was measured against which limit, or `Skipped` when the rule cannot judge it. */
  check(doc: DocView, o: O): Detail | Skipped | undefined;
  /** What the rule assumes about the text (README's filter table, `plan`). */
  assumes?: string;
}

/** A rule that cannot judge a document (no stop-word list for its language, no spaces between words): it passes, and is counted. */
export class Skipped {
  constructor(readonly why: string) {}
}

/** Rounds a measured fraction for the ledger, so lines stay short and stable. */
export function round(x: number): number {
  return Math.round(x * 10000) / 10000;
}

/**
 * A rule's value in the pipeline file: `true` (on, default thresholds), `false` (off), or a
 * mapping of thresholds (on; keys left out keep their defaults). Resolves to the user's value
 * unchanged (the merge with defaults happens once the preset is known).
 */
export function ruleValue<O extends object>(rule: Rule<O>): Schema<boolean | Partial<O>> {
  const describe = `true, false or a mapping of thresholds (${Object.keys(rule.defaults).join(", ")})`;
  return {
    describe,
    check(value, path, issues) {
      if (typeof value === "boolean") return value;
      if (value === null || typeof value !== "object" || Array.isArray(value)) {
        issues.push({ path, message: `expected ${describe}, got ${value === null ? "null" : Array.isArray(value) ? "a list" : JSON.stringify(value)}` });
        return false;
      }
      return rule.overrides.check(value, path, issues);
    },
  };
}
