// filter: drops records outside length bounds or failing switched-on quality rules (src/filter/); reason `filter:<rule>`.
import { defineStage } from "./stage.js";
import { evaluate } from "../filter/evaluate.js";
import { filterOptions, type FilterOptions } from "../filter/options.js";
import type { LengthBounds } from "../filter/length.js";
import { stopwordVersion } from "../filter/stop-word-lists.js";

export { filterOptions, type FilterOptions } from "../filter/options.js";
export { codePoints, countWords } from "../filter/units.js";

/** The ledger reason a text is dropped for (`filter:<rule>`), or undefined if it passes. */
export function filterReason(text: string, o: LengthBounds & Partial<FilterOptions>, language?: string): string | undefined {
  const failure = evaluate(text, o, language);
  return failure && `filter:${failure.rule}`;
}

export default defineStage({
  name: "filter",
  summary: "drops records outside word/character bounds or failing quality rules (Gopher set: rules: gopher)",
  form: { kind: "record" },
  options: filterOptions,
  // The stop-word lists and ICU's word segmenter decide results too: a new version of either must not reuse cached reads.
  identity(o: FilterOptions) {
    const parts = [`icu ${process.versions.icu}`];
    if (o.stop_words && !o.stop_words.words) parts.push(`stopword ${stopwordVersion()}`);
    return parts.join(", ");
  },
  create(o: FilterOptions) {
    return async function* filter(input, ctx) {
      for await (const r of input) {
        // The language stage's label, when it ran before: stop_words takes its list from it.
        const language = typeof r.meta.language === "string" ? r.meta.language : undefined;
        const failure = evaluate(r.text, o, language, (name) => ctx.count(name));
        if (failure) ctx.drop(r, `filter:${failure.rule}`, failure.detail);
        else yield r;
      }
    };
  },
});
