// filter: drops records outside length bounds or failing switched-on quality rules (src/filter/); reason `filter:<rule>`.
import { defineStage } from "./stage.js";
import { evaluate } from "../filter/evaluate.js";
import { filterOptions, type FilterOptions } from "../filter/options.js";
import type { LengthBounds } from "../filter/length.js";

export { filterOptions, type FilterOptions } from "../filter/options.js";
export { codePoints, countWords } from "../filter/units.js";

/** The ledger reason a text is dropped for (`filter:<rule>`), or undefined if it passes. */
export function filterReason(text: string, o: LengthBounds & Partial<FilterOptions>): string | undefined {
  const failure = evaluate(text, o);
  return failure && `filter:${failure.rule}`;
}

export default defineStage({
  name: "filter",
  summary: "drops records outside word/character bounds or failing quality rules (Gopher set: rules: gopher)",
  form: { kind: "record" },
  options: filterOptions,
  create(o: FilterOptions) {
    return async function* filter(input, ctx) {
      for await (const r of input) {
        const failure = evaluate(r.text, o);
        if (failure) ctx.drop(r, `filter:${failure.rule}`, failure.detail);
        else yield r;
      }
    };
  },
});
