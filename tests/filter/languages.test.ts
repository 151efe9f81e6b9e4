// Quality rules beyond English, on our own tram-depot sentences in German, French, Japanese and Chinese
// (and Romanian, Turkish and Czech, the languages a user lost whole): stop_words takes the list of the
// record's language, skips (and counts) a language without one; word length and word counts handle
// text written without spaces.
import { describe, expect, it } from "vitest";
import { createRequire } from "node:module";
import filterStage from "../../src/stages/filter.js";
import { filterOptions } from "../../src/filter/options.js";
import { evaluate } from "../../src/filter/evaluate.js";
import { stopWords } from "../../src/filter/stop-words.js";
import { meanWordLength } from "../../src/filter/word-shape.js";
import { baseLanguage, listedLanguages, packageList } from "../../src/filter/stop-word-lists.js";
import { DocView, isSpaceless } from "../../src/filter/units.js";
import { LANGUAGE_CODES } from "../../src/stages/language.js";
import { Skipped } from "../../src/filter/rule.js";
import type { Issue } from "../../src/pipeline/schema.js";
import type { DocRecord, StageContext } from "../../src/types.js";

const TEXT = {
  de: "Die Straßenbahn fährt am Abend in das Depot, und der Meister prüft die Bremsen mit der Lampe.",
  fr: "Le tramway rentre au dépôt le soir et le chef d'atelier vérifie les freins avec une lampe.",
  ja: "路面電車は夜に車庫へ戻り、整備士がランプでブレーキを点検します。",
  zh: "晚上电车回到车库以后，维修工用灯检查每一辆车的刹车和车门。",
  ro: "Tramvaiul intră seara în depou, iar mecanicul verifică frânele cu o lampă.",
  tr: "İçin tramvay akşam depoya döner ve usta frenleri bir lamba ile kontrol eder.",
  cs: "Tramvaj se večer vrací do vozovny a mistr kontroluje brzdy s lampou.",
} as const;
/** The same kind of note as bare nouns, in German and Japanese: no function words at all. */
const NOUNS = { de: "Straßenbahn Depot Abend Meister Bremsen Lampe Werkstatt", ja: "路面電車 車庫 整備士 ランプ ブレーキ 点検" };

const gopher = (more: Record<string, unknown> = {}) => {
  const issues: Issue[] = [];
  const o = filterOptions.check({ rules: "gopher", min_words: 5, ...more }, [], issues);
  expect(issues).toEqual([]);
  return o;
};

describe("stop-word lists come from the stopword package, by the codes CLD3 labels records with", () => {
  it("finds a list for every language the issue lost and the tests use, and none for Welsh", () => {
    // The package names its lists by ISO 639-3 code (its README); ICU's alias data maps them to CLD3's two-letter codes.
    const require = createRequire(import.meta.url);
    const pkg = require("stopword") as Record<string, string[]>;
    for (const [code, name] of [["de", "deu"], ["fr", "fra"], ["ja", "jpn"], ["zh", "zho"], ["ro", "ron"], ["tr", "tur"], ["cs", "ces"]]) {
      expect(LANGUAGE_CODES).toContain(code);
      expect([...packageList(code)!].sort()).toEqual([...new Set(pkg[name].map((w) => w.normalize("NFC").toLocaleLowerCase(code)))].sort());
    }
    expect(packageList("cy")).toBeUndefined();
    expect(listedLanguages()).toHaveLength(61); // 63 lists, Brazilian Portuguese and a Lugbara variant share a code with another
    // Old and romanized labels: "iw" is Hebrew; "zh-Latn" (pinyin) matches no Chinese list.
    expect(baseLanguage("iw")).toBe("he");
    expect(baseLanguage("zh-Latn")).toBeUndefined();
  });
});

describe("stop_words in the record's language", () => {
  it("passes ordinary prose in each language with that language's list, which the English list would drop", () => {
    for (const [lang, text] of Object.entries(TEXT)) {
      expect(evaluate(text, gopher(), lang), lang).toBeUndefined();
      expect(evaluate(text, gopher(), undefined), lang).toEqual({ rule: "stop_words", detail: { found: 0, min: 2, language: "en" } });
    }
  });

  it("still drops a list of bare nouns in German and Japanese", () => {
    expect(stopWords.check(new DocView(NOUNS.de, "de"), stopWords.defaults)).toEqual({ found: 0, min: 2, language: "de" });
    expect(stopWords.check(new DocView(NOUNS.ja, "ja"), stopWords.defaults)).toEqual({ found: 0, min: 2, language: "ja" });
  });

  it("skips, not drops, a language without a list, an undetermined one and a romanized one", () => {
    const welsh = "Mae'r tram yn dychwelyd i'r depo gyda'r nos ac mae'r fforman yn gwirio'r breciau.";
    for (const [lang, why] of [["cy", "no-list-cy"], ["und", "no-list-und"], ["zh-Latn", "no-list-zh-Latn"]]) {
      const skipped: string[] = [];
      expect(evaluate(welsh, gopher(), lang, (n) => skipped.push(n))).toBeUndefined();
      expect(skipped).toEqual([`filter:skipped:stop_words:${why}`]);
    }
  });

  it("language: de checks every record against the German list, whatever its label", () => {
    expect(evaluate(TEXT.de, gopher({ stop_words: { language: "de" } }), "en")).toBeUndefined();
    // The French note holds one word of the package's German list ("au"), not two.
    expect(evaluate(TEXT.fr, gopher({ stop_words: { language: "de" } }), "fr")).toEqual({ rule: "stop_words", detail: { found: 1, min: 2, language: "de" } });
  });

  it("names a language without a list in the pipeline file's message", () => {
    const issues: Issue[] = [];
    filterOptions.check({ stop_words: { language: "cy" } }, ["stages", 2, "filter"], issues);
    expect(issues.map((i) => `${i.path.join(".")}: ${i.message}`)).toEqual(['stages.2.filter.stop_words.language: expected auto or a language code with a stop-word list (e.g. en, de, fr, ja, zh), got "cy" (did you mean "ca"?)']);
  });
});

describe("text written without spaces", () => {
  it("is recognised by its letters: Japanese and Chinese are, German and French are not", () => {
    expect([TEXT.ja, TEXT.zh].map(isSpaceless)).toEqual([true, true]);
    expect([TEXT.de, TEXT.fr, NOUNS.de].map(isSpaceless)).toEqual([false, false, false]);
    // A Japanese page quoting a few Latin part numbers is still Japanese.
    expect(isSpaceless(`${TEXT.ja} 部品番号 BRK-4711 と BRK-4712。`)).toBe(true);
  });

  it("mean_word_length skips it with a reason instead of measuring a sentence as one word", () => {
    expect(meanWordLength.check(new DocView(TEXT.ja), meanWordLength.defaults)).toEqual(new Skipped("no-spaces"));
    expect(meanWordLength.check(new DocView(TEXT.zh), meanWordLength.defaults)).toEqual(new Skipped("no-spaces"));
    expect(meanWordLength.check(new DocView(TEXT.de), meanWordLength.defaults)).toBeUndefined();
  });

  it("min_words counts its words as ICU's word segments, not one word per sentence", () => {
    // By spaces the Chinese note is one word; as segments it is about twenty.
    const words = new DocView(TEXT.zh, "zh").words;
    expect(words.length).toBeGreaterThan(12);
    expect(words).toEqual(expect.arrayContaining(["电车", "车库", "检查"]));
    expect(evaluate(TEXT.zh, { min_words: 10, min_chars: 1 }, "zh")).toBeUndefined();
    expect(evaluate(TEXT.zh, { min_words: 100, min_chars: 1 }, "zh")).toEqual({ rule: "min_words", detail: { words: words.length, min: 100, counted: "word segments" } });
  });
});

describe("the filter stage", () => {
  it("uses meta.language from a language stage before it, and counts what it skipped in stage counts", async () => {
    const counts: Record<string, number> = {};
    const drops: { id: string; reason: string }[] = [];
    const quiet = () => {};
    const ctx: StageContext = {
      seed: 0,
      drop: (r, reason) => drops.push({ id: r.id, reason }),
      count: (n, k = 1) => (counts[n] = (counts[n] ?? 0) + k),
      log: { info: quiet, warn: quiet, error: quiet, debug: quiet },
      workDir: "/nonexistent",
      addOutputFile: quiet,
    };
    const records: [string, string, string | undefined][] = [
      ["de", TEXT.de, "de"],
      ["fr", TEXT.fr, "fr"],
      ["ja", TEXT.ja, "ja"],
      ["zh", TEXT.zh, "zh"],
      ["nouns", NOUNS.de, "de"],
      ["cy", "Mae'r tram yn dychwelyd i'r depo gyda'r nos ac mae'r fforman yn gwirio'r breciau.", "cy"],
      ["unlabelled-de", TEXT.de, undefined],
    ];
    async function* input(): AsyncGenerator<DocRecord> {
      for (const [i, [id, text, language]] of records.entries()) yield { id, source: "manuals", text, meta: language ? { language } : {}, origin: { file: "m.jsonl", line: i + 1 }, seq: i };
    }
    const kept: string[] = [];
    for await (const r of (await filterStage.create(gopher(), { baseDir: "." }))(input(), ctx)) kept.push(r.id);
    expect(kept).toEqual(["de", "fr", "ja", "zh", "cy"]);
    expect(drops).toEqual([
      { id: "nouns", reason: "filter:stop_words" },
      { id: "unlabelled-de", reason: "filter:stop_words" },
    ]);
    expect(counts).toEqual({ "filter:skipped:mean_word_length:no-spaces": 2, "filter:skipped:stop_words:no-list-cy": 1 });
  });
});
