// The pinned Unicode class table behaves as the reference's regex engine does, code point by code point.
//
// Reference: tiktoken npm package, WASM build of OpenAI's tiktoken (encode_ordinary).

import { get_encoding, type TiktokenEncoding } from "tiktoken";
import { describe, expect, it } from "vitest";
import { loadEncoding } from "../../src/tokenizer/index.js";
import { LL, LO, LU, MARK, MAX_CODE_POINT, NUM, OTHER, WS, classTable, rangesOf } from "../../src/tokenizer/unicode-classes.js";

// Unicode's White_Space property (PropList.txt); unchanged since Unicode 6.3.
const WHITE_SPACE: Array<[number, number]> = [
  [0x09, 0x0d], [0x20, 0x20], [0x85, 0x85], [0xa0, 0xa0], [0x1680, 0x1680], [0x2000, 0x200a],
  [0x2028, 0x2029], [0x202f, 0x202f], [0x205f, 0x205f], [0x3000, 0x3000],
];

describe("class table", () => {
  it("classifies familiar characters", () => {
    const t = classTable();
    const cp = (s: string): number => s.codePointAt(0) as number;
    expect(t[cp("A")]).toBe(LU);
    expect(t[cp("a")]).toBe(LL);
    expect(t[cp("中")]).toBe(LO);
    expect(t[0x0301]).toBe(MARK);
    expect(t[cp("7")]).toBe(NUM);
    expect(t[cp("½")]).toBe(NUM);
    expect(t[cp("!")]).toBe(OTHER);
    expect(t[0xd800]).toBe(OTHER);
    expect(t[0x10d50]).toBe(LU); // Garay, new in Unicode 16: known to the reference
    expect(t[0x0c5c]).toBe(OTHER); // new in Unicode 17: unassigned for the reference
    expect(t.length).toBe(MAX_CODE_POINT + 1);
  });

  it("has exactly Unicode's White_Space as WS", () => {
    expect(rangesOf([WS])).toEqual(WHITE_SPACE);
  });
});

// Each template makes the class of `c` visible in the ids: c + "'sx" splits as [c]['s][x] when c
// is a letter (or a mark under o200k, a number, or a space) but as [c'][sx] when c is a symbol;
// c + "123" splits as [c12][3] only when c is a number under the 1-3 digit rule.
const TEMPLATES: Array<[string, Array<(c: string) => string>]> = [
  ["gpt2", [(c) => c + "'sx"]],
  ["cl100k_base", [(c) => c + "'sx", (c) => c + "123"]],
  ["o200k_base", [(c) => c + "'sx", (c) => c + "123"]],
];

/** Planes 0-3 and the start of plane 14 hold every assigned character; elsewhere a sparse sample. */
function probeCodePoints(): number[] {
  const out: number[] = [];
  for (let cp = 0; cp <= MAX_CODE_POINT; cp++) {
    if (cp >= 0xd800 && cp <= 0xdfff) continue;
    if (cp < 0x40000 || (cp >= 0xe0000 && cp < 0xe1000) || cp % 997 === 0) out.push(cp);
  }
  return out;
}

describe.each(TEMPLATES)("%s: every code point splits as in the reference", (name, templates) => {
  it("probing each code point in context", () => {
    const enc = loadEncoding(name);
    const ref = get_encoding(name as TiktokenEncoding);
    const cps = probeCodePoints();
    const bad: string[] = [];
    try {
      for (const template of templates) {
        // Probe in chunks joined by newlines; look at single code points only when a chunk differs.
        for (let k = 0; k < cps.length; k += 2048) {
          const chunk = cps.slice(k, k + 2048);
          const text = chunk.map((cp) => "\n" + template(String.fromCodePoint(cp))).join("");
          const ours = enc.encode(text);
          const theirs = ref.encode_ordinary(text);
          if (ours.length === theirs.length && ours.every((id, i) => id === theirs[i])) continue;
          for (const cp of chunk) {
            const s = template(String.fromCodePoint(cp));
            if (enc.encode(s).join() !== Array.from(ref.encode_ordinary(s)).join()) bad.push("U+" + cp.toString(16).toUpperCase());
          }
        }
      }
    } finally {
      ref.free();
    }
    expect(bad.slice(0, 20), `${bad.length} code points differ`).toEqual([]);
  });
});
