// The filter's quality rules on a depot manual in six languages, through the real CLI: with a language
// stage before the filter, each page is checked against its own language's stop words, Chinese and
// Japanese pages are not measured by word length, a Welsh page (no list) passes and is counted, and
// `plan` says what the rules assume in either order of the stages.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { siftpack, tempDir } from "./cli.js";

const PAGES: Record<string, string> = {
  en: "The tram returns to the depot in the evening, and the fitter checks the brakes with a lamp. After that the car is parked on road four until the morning shift takes it out again.",
  de: "Die Straßenbahn fährt am Abend in das Depot, und der Meister prüft die Bremsen mit der Lampe. Danach wird der Wagen auf Gleis vier abgestellt, bis die Frühschicht ihn wieder hinausfährt.",
  fr: "Le tramway rentre au dépôt le soir et le chef d'atelier vérifie les freins avec une lampe. Ensuite la voiture reste sur la voie quatre jusqu'à ce que l'équipe du matin la reprenne.",
  ja: "路面電車は夜に車庫へ戻り、整備士がランプでブレーキを点検します。その後、車両は朝の担当者が出庫させるまで四番線に留め置かれます。",
  zh: "晚上电车回到车库以后，维修工用灯检查每一辆车的刹车和车门。然后这辆车停在四号线上，一直到早班的司机把它开出去。",
  cy: "Mae'r tram yn dychwelyd i'r depo gyda'r nos, ac mae'r ffitiwr yn gwirio'r breciau gyda lamp. Wedyn mae'r car yn aros ar ffordd pedwar tan i'r shifft fore fynd ag ef allan eto.",
};
/** An English page of bare nouns: the stop-word rule is still there to drop it. */
const NOUNS = "Tram depot evening fitter brakes lamp car road four morning shift parking inspection report";

let dir: string;
beforeAll(() => {
  dir = tempDir("filter-languages");
  mkdirSync(join(dir, "data"));
  const lines = [...Object.entries(PAGES).map(([lang, text]) => ({ page: lang, text })), { page: "nouns", text: NOUNS }];
  writeFileSync(join(dir, "data", "manual.jsonl"), lines.map((l) => JSON.stringify(l)).join("\n") + "\n");
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function pipeline(name: string, stages: string[]): string {
  mkdirSync(join(dir, name));
  const file = join(dir, name, "p.yaml");
  writeFileSync(
    file,
    ["siftpack: 1", "sources: [{ name: manual, files: ../data/manual.jsonl, format: jsonl, id: page }]", "stages:", ...stages.map((s) => `  - ${s}`), "  - tokenize: {}", "  - pack: { length: 64 }", "output: { dir: out }"].join("\n") + "\n",
  );
  return file;
}

const FILTER = "filter: { rules: gopher, min_words: 5 }";

describe("quality rules beyond English, end to end", () => {
  it("with language before filter keeps every page in its language and drops only the page of bare nouns", () => {
    const file = pipeline("labelled", ["normalize: {}", "language: {}", FILTER]);
    const plan = siftpack(["plan", file]);
    expect(plan.code, plan.stderr).toBe(0);
    expect(plan.stdout).toContain("# filter (stage 3) assumes: stop_words: each record's language (stage 2), lists of the stopword package for 61 languages; others skipped and counted; mean_word_length: skipped for text written without spaces");
    const r = siftpack(["run", file]);
    expect(r.code, r.stderr).toBe(0);
    const ledger = gunzipSync(readFileSync(join(dir, "labelled", "out", "ledger.jsonl.gz"))).toString("utf8").trim().split("\n").map((l) => JSON.parse(l));
    expect(ledger.filter((l) => l.fate === "dropped").map((l) => [l.id, l.reason])).toEqual([["nouns", "filter:stop_words"]]);
    const m = JSON.parse(readFileSync(join(dir, "labelled", "out", "manifest.json"), "utf8"));
    // The page of nouns is English too.
    for (const lang of Object.keys(PAGES)) expect(m.stage_counts[`language:${lang}`], lang).toBe(lang === "en" ? 2 : 1);
    expect(m.stage_counts["filter:skipped:mean_word_length:no-spaces"]).toBe(2);
    expect(m.stage_counts["filter:skipped:stop_words:no-list-cy"]).toBe(1);
    expect(r.stdout).toContain("filter: records a rule could not judge and passed: mean_word_length 2 (no-spaces 2); stop_words 1 (no-list-cy 1)");
  });

  it("with the filter first, plan says the stop words are English, and the run drops every page not in English", () => {
    const file = pipeline("unlabelled", ["normalize: {}", FILTER, "language: {}"]);
    const plan = siftpack(["plan", file]);
    expect(plan.stdout).toContain("# filter (stage 2) assumes: stop_words: ENGLISH for every record (no language stage before filter: put one there, or set stop_words.language)");
    const r = siftpack(["run", file]);
    expect(r.code, r.stderr).toBe(0);
    const ledger = gunzipSync(readFileSync(join(dir, "unlabelled", "out", "ledger.jsonl.gz"))).toString("utf8").trim().split("\n").map((l) => JSON.parse(l));
    expect(ledger.filter((l) => l.fate === "kept").map((l) => l.id)).toEqual(["en"]);
  });
});
