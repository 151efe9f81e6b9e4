// Stop-word rule: natural-language prose uses a few very common function words, in its own language.
import { field, list, num, obj, str, type Issue, type Path, type Schema } from "../pipeline/schema.js";
import { closest } from "../lib/did-you-mean.js";
import { Skipped, type Rule } from "./rule.js";
import { baseLanguage, listedLanguages, packageList } from "./stop-word-lists.js";

export interface StopWordOptions {
  min: number;
  /** `auto`: each record's meta.language (English without one); or one language for every record. */
  language: string;
  /** A list of your own, for every record (the language is then not looked at). */
  words?: string[];
}

/** Gopher's list (from memory; see gopher.ts): at least two of these eight words. */
export const GOPHER_STOP_WORDS: readonly string[] = ["the", "be", "to", "of", "and", "that", "have", "with"];

/** Leading and trailing punctuation and symbols, so "the," and "(with" count. */
const EDGE_PUNCT = /^[\p{P}\p{S}]+|[\p{P}\p{S}]+$/gu;
const NON_ASCII = /[^\x00-\x7f]/;

/** The list a record is checked against, and the language it is for; `list` undefined: no list for it. */
function listFor(o: StopWordOptions, recordLanguage: string | undefined): { language: string; list: ReadonlySet<string> | undefined } {
  if (o.words) return { language: "given", list: (custom.get(o.words) ?? custom.set(o.words, new Set(o.words.map((w) => w.normalize("NFC").toLowerCase()))).get(o.words))! };
  const label = o.language === "auto" ? (recordLanguage ?? "en") : o.language;
  const code = baseLanguage(label) ?? label;
  return { language: code, list: code === "en" ? GOPHER_SET : packageList(label) };
}
const GOPHER_SET: ReadonlySet<string> = new Set(GOPHER_STOP_WORDS);
const custom = new WeakMap<string[], Set<string>>();

/** `auto`, or a language code with a list (en, or one of the package's). */
function languageOption(): Schema<string> {
  const describe = "auto or a language code with a stop-word list (e.g. en, de, fr, ja, zh)";
  return {
    describe,
    check(value: unknown, path: Path, issues: Issue[]): string {
      if (value === "auto" || (typeof value === "string" && (baseLanguage(value) === "en" || packageList(value)))) return value as string;
      const near = typeof value === "string" ? closest(value, ["auto", ...listedLanguages()]) : undefined;
      issues.push({ path, message: `expected ${describe}, got ${JSON.stringify(value)}${near ? ` (did you mean "${near}"?)` : ""}` });
      return "auto";
    },
  };
}

/**
 * stop_words: the document must contain at least `min` different words of its language's list
 * (compared lower-cased in that language, punctuation at the word's edges ignored). English uses
 * Gopher's list and minimum (from memory; see gopher.ts): at least two of "the, be, to, of, and,
 * that, have, with"; we read "two of the following words" as two different words. Other languages
 * use the `stopword` package's list (stop-word-lists.ts), which is longer than Gopher's eight words,
 * so two of them is an easier bar. A record in a language without a list is skipped and counted
 * (`filter:skipped:stop_words:no-list-<code>`), never dropped for being in that language.
 */
export const stopWords: Rule<StopWordOptions> = {
  name: "stop_words",
  defaults: { min: 2, language: "auto" },
  overrides: obj({
    min: field(num({ integer: true, min: 0 })),
    language: field(languageOption()),
    words: field(list(str({ nonEmpty: true }), { nonEmpty: true })),
  }) as Schema<Partial<StopWordOptions>>,
  assumes: "the record's language (meta.language from a language stage before filter, or stop_words.language; English otherwise) has a list; else skipped (counted)",
  check(doc, o) {
    const { language, list } = listFor(o, doc.language);
    if (!list) return new Skipped(`no-list-${language}`);
    const lower = language;
    const found = new Set<string>();
    for (const w of doc.words) {
      let bare = w.replace(EDGE_PUNCT, "");
      if (NON_ASCII.test(bare)) bare = bare.normalize("NFC");
      // Lithuanian, Turkish and Azeri have casing rules of their own (Unicode SpecialCasing.txt): Turkish "İçin" is "için", not "i̇çin".
      bare = lower === "tr" || lower === "az" || lower === "lt" ? bare.toLocaleLowerCase(lower) : bare.toLowerCase();
      if (list.has(bare)) {
        found.add(bare);
        if (found.size >= o.min) return undefined;
      }
    }
    return found.size >= o.min ? undefined : { found: found.size, min: o.min, ...(language === "given" ? {} : { language }) };
  },
};
