// Word-level quality rules at their Gopher thresholds: just inside passes, just outside fails.
import { describe, expect, it } from "vitest";
import { alphaWords, meanWordLength } from "../../src/filter/word-shape.js";
import { symbolRatio } from "../../src/filter/symbols.js";
import { stopWords } from "../../src/filter/stop-words.js";
import { verdict } from "./docs.js";

const times = (word: string, n: number) => Array(n).fill(word);

describe("mean_word_length (3 to 10 characters)", () => {
  it("passes a mean of exactly 3 and fails 2.9", () => {
    expect(verdict(meanWordLength, times("cab", 10).join(" "))).toBeUndefined();
    expect(verdict(meanWordLength, [...times("cab", 9), "on"].join(" "))).toEqual({ mean: 2.9, min: 3, max: 10 });
  });
  it("passes a mean of exactly 10 and fails 10.1", () => {
    expect(verdict(meanWordLength, times("pantograph", 10).join(" "))).toBeUndefined();
    expect(verdict(meanWordLength, [...times("pantograph", 9), "pantographs"].join(" "))).toEqual({ mean: 10.1, min: 3, max: 10 });
  });
  it("measures code points, so accents and astral characters count once", () => {
    expect(verdict(meanWordLength, "Straße Bühne Ü🚋x")).toBeUndefined(); // 6, 5, 3 → mean 4.67
    expect(verdict(meanWordLength, "🚋🚋 🚋🚋", { min: 2.5, max: 10 })).toMatchObject({ mean: 2 });
  });
  it("fails a text without words", () => {
    expect(verdict(meanWordLength, " \n\t ")).toMatchObject({ mean: 0 });
  });
});

describe("alpha_words (at least 80 % of words hold a letter)", () => {
  it("passes 8 of 10 and fails 7 of 10", () => {
    const words = "car 4711 left road 12 after the brake test today".split(" "); // 8 with letters
    expect(verdict(alphaWords, words.join(" "))).toBeUndefined();
    expect(verdict(alphaWords, [...words.slice(0, 9), "09:40"].join(" "))).toEqual({ share: 0.7, min: 0.8 });
  });
  it("counts letters of any script", () => {
    expect(verdict(alphaWords, "Straßenbahn Депо τραμ 4711 車庫")).toBeUndefined(); // 4 of 5
  });
});

describe("symbol_ratio (at most 0.1 hash signs or ellipses per word)", () => {
  const twenty = "the night shift moved car 4711 to road 3 and car 4712 to road 5 before the wash plant opened at six".split(" ").slice(0, 20);
  it("passes 2 hashes in 20 words and fails 3", () => {
    expect(twenty).toHaveLength(20);
    const two = twenty.map((w, i) => (i === 4 || i === 9 ? `#${w}` : w)).join(" ");
    const three = twenty.map((w, i) => (i === 4 || i === 9 || i === 14 ? `#${w}` : w)).join(" ");
    expect(verdict(symbolRatio, two)).toBeUndefined();
    expect(verdict(symbolRatio, three)).toEqual({ symbol: "#", ratio: 0.15, max: 0.1 });
  });
  it("counts ellipses separately: a run of dots once, and the … character", () => {
    const two = [...twenty.slice(0, 19), "waiting...."].join(" ").replace("shift", "shift…");
    expect(verdict(symbolRatio, two)).toBeUndefined();
    const three = two.replace("plant", "plant...");
    expect(verdict(symbolRatio, three)).toEqual({ symbol: "...", ratio: 0.15, max: 0.1 });
  });
  it("does not add hashes and ellipses together", () => {
    const mixed = twenty.map((w, i) => (i < 2 ? `#${w}` : i < 4 ? `${w}...` : w)).join(" "); // 2 + 2
    expect(verdict(symbolRatio, mixed)).toBeUndefined();
  });
});

describe("stop_words (at least 2 different of: the, be, to, of, and, that, have, with)", () => {
  it("passes two different stop words and fails one, however often it repeats", () => {
    expect(verdict(stopWords, "Moved the car to road 4.")).toBeUndefined();
    expect(verdict(stopWords, "Moved the car, the tractor, the wagon onto road 4.")).toEqual({ found: 1, min: 2, language: "en" });
    expect(verdict(stopWords, "Car 4711 road 4 done.")).toEqual({ found: 0, min: 2, language: "en" });
  });
  it("ignores case and punctuation at the word's edges, but not inside words", () => {
    expect(verdict(stopWords, "THE brake, (WITH) a new pad")).toBeUndefined();
    expect(verdict(stopWords, "theory within together")).toEqual({ found: 0, min: 2, language: "en" });
  });
  it("takes a list of the user's own for another language", () => {
    const german = { min: 2, language: "auto", words: ["der", "die", "das", "und", "mit"] };
    expect(verdict(stopWords, "Die Tür und der Sensor", german)).toBeUndefined();
    expect(verdict(stopWords, "The door and the sensor", german)).toEqual({ found: 0, min: 2 });
  });
});
