// The chart primitives: axis ticks, bars proportional to their values, marks tagged with the figures they draw.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { ticks } from "../../src/report/svg.js";
import { hbars } from "../../src/report/hbars.js";
import { columns } from "../../src/report/columns.js";

/** The data marks of an SVG string: size, value and figure path. */
function marks(svg: string) {
  return [...svg.matchAll(/<rect class="mark ([^"]+)" x="([\d.]+)" y="([\d.]+)" width="([\d.]+)" height="([\d.]+)" data-value="([\d.]+)"(?: data-fig="([^"]+)")?/g)].map((m) => ({
    cls: m[1],
    x: +m[2],
    y: +m[3],
    w: +m[4],
    h: +m[5],
    value: +m[6],
    fig: m[7] ? JSON.parse(m[7].replace(/&quot;/g, '"')) : undefined,
  }));
}

describe("ticks", () => {
  it("start at 0, rise in equal round steps, and end at or just above the maximum", () => {
    fc.assert(
      fc.property(fc.double({ min: 0.001, max: 1e12, noNaN: true }), fc.integer({ min: 2, max: 8 }), (max, count) => {
        const t = ticks(max, count);
        expect(t[0]).toBe(0);
        expect(t[t.length - 1]).toBeGreaterThanOrEqual(max - 1e-9 * max);
        const step = t[1] - t[0];
        // 1, 2 or 5 times a power of ten
        const mant = step / 10 ** Math.floor(Math.log10(step) + 1e-12);
        expect([1, 2, 5, 10].some((k) => Math.abs(mant - k) < 1e-6)).toBe(true);
        for (let i = 1; i < t.length; i++) expect(t[i] - t[i - 1]).toBeCloseTo(step, 6);
        // the last tick is the first one at or above max
        expect(t[t.length - 2]).toBeLessThan(max);
        expect(t.length).toBeLessThanOrEqual(2 * count + 2);
      }),
    );
  });
});

describe("hbars", () => {
  it("draws stacked parts with widths proportional to their values on one scale", () => {
    const svg = hbars({
      title: "tokens",
      desc: "tokens per split",
      unit: "tokens",
      rows: [
        { label: "train", parts: [{ cls: "s0", label: "tickets", value: 3000, fig: ["a"] }, { cls: "s1", label: "manuals", value: 1200 }] },
        { label: "val", parts: [{ cls: "s0", label: "tickets", value: 250 }, { cls: "s1", label: "manuals", value: 0 }] },
      ],
    });
    const ms = marks(svg);
    expect(ms).toHaveLength(4);
    const k = ms[0].w / ms[0].value;
    expect(k).toBeGreaterThan(0);
    for (const m of ms) expect(m.w).toBeCloseTo(m.value * k, 1);
    // parts of a row follow each other
    expect(ms[1].x).toBeCloseTo(ms[0].x + ms[0].w, 1);
    expect(ms[0].fig).toEqual(["a"]);
    expect(svg).toContain('data-scale="linear"');
    expect(svg).toMatch(/<title id="c\d+-t">tokens<\/title>/);
  });

  it("draws each row as 100 % when asked for shares", () => {
    const svg = hbars({ title: "t", desc: "d", unit: "tokens", shares: true, rows: [{ label: "a", parts: [{ cls: "s0", label: "x", value: 1 }, { cls: "pad", label: "y", value: 3 }] }, { label: "b", parts: [{ cls: "s0", label: "x", value: 10 }, { cls: "pad", label: "y", value: 10 }] }] });
    const ms = marks(svg);
    const rowA = ms[0].w + ms[1].w;
    expect(ms[2].w + ms[3].w).toBeCloseTo(rowA, 1);
    expect(ms[0].w / rowA).toBeCloseTo(0.25, 2);
    expect(ms[2].w / rowA).toBeCloseTo(0.5, 2);
  });

  it("escapes labels", () => {
    expect(hbars({ title: "a<b", desc: "d", unit: "u", rows: [{ label: "<x>", parts: [{ cls: "s0", label: "&", value: 1 }] }] })).not.toMatch(/<x>|a<b/);
  });
});

describe("columns", () => {
  it("scales each panel on its own and keeps heights proportional within a panel", () => {
    const svg = columns({
      title: "lengths",
      desc: "d",
      unit: "documents",
      xCaption: "tokens",
      panels: [
        { name: "train", cls: "s0", columns: [{ label: "8", value: 200, tip: "" }, { label: "16", value: 50, tip: "" }] },
        { name: "val", cls: "s1", columns: [{ label: "8", value: 4, tip: "" }, { label: "16", value: 1, tip: "" }] },
      ],
    });
    const ms = marks(svg);
    expect(ms).toHaveLength(4);
    expect(ms[0].h / ms[1].h).toBeCloseTo(4, 2);
    expect(ms[2].h / ms[3].h).toBeCloseTo(4, 2);
    // The small panel is not flattened by the large one's scale.
    expect(ms[2].h).toBeGreaterThan(ms[0].h / 3);
    expect(svg.match(/data-scale="linear"/g)).toHaveLength(2);
  });
});
