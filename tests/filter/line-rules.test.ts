// Line-level quality rules at their Gopher thresholds: bullets, trailing ellipses, duplicate lines and paragraphs.
import { describe, expect, it } from "vitest";
import { bulletLines, ellipsisLines } from "../../src/filter/line-shape.js";
import { duplicateLines, duplicateParagraphs, duplicateShares } from "../../src/filter/repetition.js";
import { verdict } from "./docs.js";

const line = (i: number) => `Checked door ${i} on car 47${String(i).padStart(2, "0")}, no fault found`;

describe("bullet_lines (at most 90 % of lines start with a bullet)", () => {
  it("passes 9 of 10 and fails 10 of 11", () => {
    const nine = [line(0), ...Array.from({ length: 9 }, (_, i) => `• ${line(i + 1)}`)].join("\n");
    const ten = [line(0), ...Array.from({ length: 10 }, (_, i) => `- ${line(i + 1)}`)].join("\n");
    expect(verdict(bulletLines, nine)).toBeUndefined();
    expect(verdict(bulletLines, ten)).toEqual({ share: 0.9091, max: 0.9 });
  });
  it("knows the common bullet marks and needs a space after - * + –", () => {
    const marks = ["•", "‣", "◦", "▪", "●", "-", "*", "+", "–", "➤"].map((m, i) => `  ${m} ${line(i)}`).join("\n");
    expect(verdict(bulletLines, marks)).toMatchObject({ share: 1 });
    const dashes = ["-5 degrees in the yard", "*note* the pit lamp", "+2 cars on road 4", "–"].join("\n");
    expect(verdict(bulletLines, dashes, { max: 0 })).toBeUndefined();
  });
  it("skips blank lines when counting", () => {
    expect(verdict(bulletLines, `• a\n\n\n• b\n${line(1)}`, { max: 0.66 })).toEqual({ share: 0.6667, max: 0.66 });
  });
});

describe("ellipsis_lines (at most 30 % of lines end with an ellipsis)", () => {
  it("passes 3 of 10 and fails 4 of 13", () => {
    const make = (n: number, dotted: number) => Array.from({ length: n }, (_, i) => (i < dotted ? `${line(i)}...` : line(i))).join("\n");
    expect(verdict(ellipsisLines, make(10, 3))).toBeUndefined();
    expect(verdict(ellipsisLines, make(13, 4))).toEqual({ share: 0.3077, max: 0.3 });
  });
  it("accepts … and trailing spaces, not two dots or an ellipsis inside the line", () => {
    expect(verdict(ellipsisLines, "waiting for parts…  \nok", { max: 0.4 })).toEqual({ share: 0.5, max: 0.4 });
    expect(verdict(ellipsisLines, "see above..\nwait... then go", { max: 0 })).toBeUndefined();
  });
});

describe("duplicate_lines (≤ 30 % of lines, ≤ 20 % of characters repeat an earlier line)", () => {
  it("passes 3 repeated lines of 10 and fails 4 of 10", () => {
    // Repeats are short ("ok", 2 characters) so the character share stays low.
    const doc = (repeats: number) => [...Array.from({ length: 10 - repeats - 1 }, (_, i) => line(i)), ...Array(repeats + 1).fill("ok")].join("\n");
    expect(verdict(duplicateLines, doc(3))).toBeUndefined();
    expect(verdict(duplicateLines, doc(4))).toEqual({ lines: 0.4, max_lines: 0.3 });
  });
  it("passes repeats holding exactly 20 % of the characters and fails just above", () => {
    // 3 unique lines of 40 characters and one 40-character line twice: 40 / 200 = 0.2.
    const unique = ["A".repeat(40), "B".repeat(40), "C".repeat(40)];
    const rep = "E".repeat(40);
    expect(verdict(duplicateLines, [...unique, rep, rep].join("\n"), { max_lines: 1, max_chars: 0.2 })).toBeUndefined();
    const longer = "E".repeat(41); // 41 / 202 = 0.203
    expect(verdict(duplicateLines, [...unique, longer, longer].join("\n"), { max_lines: 1, max_chars: 0.2 })).toEqual({ chars: 0.203, max_chars: 0.2 });
  });
  it("compares lines without surrounding whitespace and ignores blank lines", () => {
    expect(duplicateShares(["a b", "  a b  ", "c"])).toEqual({ items: 1 / 3, chars: 3 / 7 });
    expect(verdict(duplicateLines, "x\n\n\n\ny")).toBeUndefined();
  });
});

describe("duplicate_paragraphs (≤ 30 % of paragraphs, ≤ 20 % of characters)", () => {
  const para = (i: number) => `${line(i)}.\nSigned off by the shift supervisor ${i}.`;
  it("passes 3 repeated paragraphs of 10 and fails 4 of 10", () => {
    const doc = (repeats: number) => [...Array.from({ length: 10 - repeats - 1 }, (_, i) => para(i)), ...Array(repeats + 1).fill("Noted.")].join("\n\n");
    expect(verdict(duplicateParagraphs, doc(3))).toBeUndefined();
    expect(verdict(duplicateParagraphs, doc(4))).toEqual({ paragraphs: 0.4, max_paragraphs: 0.3 });
  });
  it("splits paragraphs at blank lines, including lines of spaces", () => {
    expect(verdict(duplicateParagraphs, "Noted.\n \t \nNoted.", { max_paragraphs: 0.49, max_chars: 1 })).toEqual({ paragraphs: 0.5, max_paragraphs: 0.49 });
    expect(verdict(duplicateParagraphs, "Noted.\nNoted.", { max_paragraphs: 0, max_chars: 0 })).toBeUndefined(); // one paragraph
  });
  it("fails on the character share when few but long paragraphs repeat", () => {
    const long = "The wash plant brushes were replaced and the pressure was set back to normal. ".repeat(3).trim();
    const doc = [para(1), para(2), para(3), para(4), para(5), para(6), long, long].join("\n\n");
    expect(verdict(duplicateParagraphs, doc)).toMatchObject({ max_chars: 0.2 });
  });
});
