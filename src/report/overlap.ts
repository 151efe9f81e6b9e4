// The overlap between splits as the build measured it (manifest "overlap"): one row per pair of splits.
import type { Manifest } from "../output/manifest.js";
import type { PairFigures } from "../overlap/split-overlap.js";
import { esc, fig, note, pct, table } from "./html.js";
import { hbars } from "./hbars.js";

type Pair = PairFigures;

interface Overlap {
  ngram: number;
  pairs: Pair[];
  near_duplicates?: { threshold: number };
  train_set?: { kind: string; false_positive_rate?: number };
}

export function overlapSection(m: Manifest): string {
  const o = m.overlap as Overlap | undefined;
  if (!o || !Array.isArray(o.pairs)) return note("Overlap between splits was not computed: the build has no held-out split.");
  if (o.pairs.length === 0) return note("Overlap between splits was computed, but there is no pair of non-empty splits to compare.");
  const p = (i: number, k: keyof Pair) => ["overlap", "pairs", i, k];
  const head = ["", ...o.pairs.map((x) => `${x.held_out} vs ${x.reference}`)];
  const row = (label: string, cell: (x: Pair, i: number) => string) => [esc(label), ...o.pairs.map(cell)];
  const num = (k: keyof Pair, digits?: number) => (x: Pair, i: number) => fig(p(i, k), x[k] as number, digits === undefined ? undefined : (x[k] as number).toFixed(digits));
  const share = (k: keyof Pair) => (x: Pair, i: number) => fig(p(i, k), x[k] as number, pct(x[k] as number));
  // One column per pair of splits: three pairs fit across a page, eleven figures would not.
  const rows = [
    row("held-out documents", num("documents")),
    row("exact copies of a reference document", num("exact_duplicates")),
    row(`documents sharing a ${o.ngram}-gram`, num("ngram_documents")),
    row("… as a share of the documents", share("ngram_document_fraction")),
    row(`${o.ngram}-gram positions`, num("ngrams")),
    row("… also found in the reference", num("ngrams_seen")),
    row("… as a share of the positions", share("ngram_fraction")),
    row("near-duplicate pairs", num("near_duplicate_pairs")),
    row("documents in near-duplicate pairs", num("near_duplicate_documents")),
    row("Jensen–Shannon divergence (bits)", num("jensen_shannon_bits", 3)),
    row("cross-entropy (bits per token)", num("cross_entropy_bits", 2)),
    row("entropy (bits per token)", num("entropy_bits", 2)),
  ];
  const chart = hbars({
    title: `Held-out documents sharing a ${o.ngram}-gram with the reference split`,
    desc: o.pairs.map((x) => `${x.held_out} vs ${x.reference}: ${pct(x.ngram_document_fraction)}`).join("; "),
    rows: o.pairs.map((x, i) => ({
      label: `${x.held_out} vs ${x.reference}`,
      parts: [
        { cls: "drop", label: `sharing a ${o.ngram}-gram`, value: x.ngram_documents, fig: p(i, "ngram_documents") },
        { cls: "rest", label: "sharing none", value: x.documents - x.ngram_documents },
      ],
    })),
    unit: "documents",
    shares: true,
  });
  const fpr = o.train_set?.false_positive_rate;
  return (
    `<p>How much of each held-out split already appears in the split it is compared with. Word ${fig(["overlap", "ngram"], o.ngram)}-grams; near-duplicates at the MinHash threshold ${o.near_duplicates ? fig(["overlap", "near_duplicates", "threshold"], o.near_duplicates.threshold) : "of the pipeline"}.</p>\n` +
    `<figure>${chart}<figcaption>Share of each held-out split's documents that share at least one word ${o.ngram}-gram with the reference split.</figcaption></figure>\n` +
    table({ caption: "Overlap between splits (held-out split vs reference)", head, rows, numeric: o.pairs.map((_, i) => i + 1) }) +
    `\n<p class="small">Cross-entropy is of the held-out tokens under the reference split's unigram model; the gap to their own entropy measures how far the two distributions are apart.${fpr !== undefined ? ` The reference n-grams were held in a Bloom filter with a measured false-positive rate of ${fig(["overlap", "train_set", "false_positive_rate"], fpr)}.` : ""}</p>`
  );
}
