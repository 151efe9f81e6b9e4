// The mask pictures of a row with conversations: a bar beside the rows trained on; without targets, the pictures are as before.
import { describe, expect, it } from "vitest";
import { maskSvg } from "../../src/pack/mask-svg.js";
import { maskPng } from "../../src/pack/mask-png.js";

const seg = Uint32Array.from([1, 1, 1, 1, 1, 1, 1, 2, 2, 2, 2, 2, 2, 2, 2, 2]);
const targets = Uint32Array.from([0, 0, 0, 0, 1, 1, 1, 0, 0, 0, 0, 1, 1, 1, 1, 1]);

describe("mask pictures with trained rows", () => {
  it("SVG: one bar per run of target rows, with its token range", () => {
    const { svg } = maskSvg(seg, { title: "t", targets });
    expect([...svg.matchAll(/<title>targets: tokens (\d+)–(\d+)<\/title>/g)].map((m) => [+m[1], +m[2]])).toEqual([
      [4, 6],
      [11, 15],
    ]);
    expect(svg).toContain("black bar on the right");
    expect(maskSvg(seg, { title: "t" }).svg).not.toContain("targets:");
  });

  it("PNG: the bar is in the right margin only; without targets the bytes do not change", () => {
    const plain = maskPng(seg);
    const marked = maskPng(seg, 800, targets);
    expect(marked.width).toBe(plain.width);
    expect(Buffer.from(marked.png).equals(Buffer.from(plain.png))).toBe(false);
    expect(Buffer.from(maskPng(seg, 800, undefined).png).equals(Buffer.from(plain.png))).toBe(true);
  });
});
