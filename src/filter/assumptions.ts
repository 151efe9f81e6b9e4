// What the filter's rules assume about a pipeline's text (its language, spaces between words), as lines for `plan`.
import type { StageEntry } from "../pipeline/config.js";
import type { FilterOptions } from "./options.js";
import { listedLanguages } from "./stop-word-lists.js";

/** One line per filter stage whose switched-on rules depend on the language or on spaces between words. */
export function filterAssumptions(stages: readonly StageEntry[]): string[] {
  const out: string[] = [];
  stages.forEach((s, i) => {
    if (s.name !== "filter") return;
    const o = s.options as FilterOptions;
    const parts: string[] = [];
    if (o.stop_words) {
      const labelled = stages.slice(0, i).findIndex((e) => e.name === "language");
      if (o.stop_words.words) parts.push("stop_words: your list, for every record");
      else if (o.stop_words.language !== "auto") parts.push(`stop_words: every record is taken to be in "${o.stop_words.language}"`);
      else if (labelled >= 0) parts.push(`stop_words: each record's language (stage ${labelled + 1}), lists of the stopword package for ${listedLanguages().length} languages; others skipped and counted`);
      else parts.push("stop_words: ENGLISH for every record (no language stage before filter: put one there, or set stop_words.language)");
    }
    if (o.mean_word_length) parts.push("mean_word_length: skipped for text written without spaces (Chinese, Japanese, Thai …)");
    if (o.min_words > 0 || o.max_words !== undefined) parts.push("words of text written without spaces are ICU word segments");
    if (parts.length) out.push(`filter (stage ${i + 1}) assumes: ${parts.join("; ")}`);
  });
  return out;
}
