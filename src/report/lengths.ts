// Document-length histograms per split: power-of-two buckets of tokens, so the token axis is logarithmic.
import type { Manifest } from "../output/manifest.js";
import { fig, int, note, table } from "./html.js";
import { columns } from "./columns.js";
import { splitClass } from "./palette.js";

/** 1024 → "1k", 65536 → "64k": bucket bounds are powers of two. */
export function tokenLabel(n: number): string {
  if (n >= 1 << 20) return `${n / (1 << 20)}M`;
  if (n >= 1024) return `${n / 1024}k`;
  return String(n);
}

export function lengthsSection(m: Manifest): string {
  const splits = Object.entries(m.splits).filter(([, s]) => Array.isArray(s.length_histogram) && s.length_histogram.length > 0);
  if (splits.length === 0) return note("This manifest has no document-length histograms.");
  // One set of buckets for every split, so the panels line up.
  const mins = [...new Set(splits.flatMap(([, s]) => s.length_histogram.map((b) => b.min)))].sort((a, b) => a - b);
  const cell = (split: string, min: number) => {
    const h = m.splits[split].length_histogram;
    const i = h.findIndex((b) => b.min === min);
    return i >= 0 ? { value: h[i].documents, fig: ["splits", split, "length_histogram", i, "documents"] as (string | number)[] } : { value: 0, fig: undefined };
  };
  const panels = splits.map(([name], i) => ({
    name: `${name} (${int(m.splits[name].documents)} documents)`,
    cls: splitClass(name, i),
    columns: mins.map((min) => {
      const c = cell(name, min);
      return { label: tokenLabel(min), value: c.value, fig: c.fig, tip: `${name}: ${int(c.value)} documents of ${int(min)}–${int(2 * min - 1)} tokens` };
    }),
  }));
  const chart = columns({
    title: "Document lengths per split",
    desc: `Histograms of document length in tokens for ${splits.map(([n]) => n).join(", ")}; each column covers twice the lengths of the one before it.`,
    panels,
    xCaption: "tokens per document, from the bucket's lower bound (log scale: each column doubles)",
    unit: "documents",
  });
  const rows = mins.map((min) => [
    `${int(min)}–${int(2 * min - 1)}`,
    ...splits.map(([name]) => {
      const c = cell(name, min);
      return c.fig ? fig(c.fig, c.value) : "0";
    }),
  ]);
  return (
    `<p>How long the documents are, in tokens with the end-of-text token, per split. Long documents are ${m.strategy === "concat" ? "cut at block edges" : `cut only when longer than a block of ${fig(["length"], m.length)} tokens`}.</p>\n` +
    `<figure>${chart}<figcaption>Documents per length bucket; each panel has its own vertical scale.</figcaption></figure>\n` +
    table({ caption: "Documents per length bucket (tokens)", head: ["tokens", ...splits.map(([n]) => n)], rows, numeric: splits.map((_, i) => i + 1) })
  );
}
