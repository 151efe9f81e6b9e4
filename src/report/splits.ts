// Documents and tokens per split and per source: the split counts, each source's fate counts and token statistics.
import type { Manifest } from "../output/manifest.js";
import type { GroupStats } from "../analysis/token-stats-steps.js";
import { esc, fig, int, pct, table } from "./html.js";
import { hbars, type BarRow } from "./hbars.js";
import { sourceClass } from "./palette.js";
import type { StatsFigures } from "./figures.js";

type TokenStats = Record<string, { all: GroupStats; by_source: Record<string, GroupStats> }>;

export function splitsSection(m: Manifest, f: StatsFigures): string {
  const parts: string[] = [];
  const sources = Object.keys(m.records.by_source);
  const ts = m.token_stats as TokenStats | undefined;
  const splitNames = Object.keys(f.splits);

  if (ts) {
    // Per-source figures come from token_stats: documents as kept, before repeats by weight.
    const rows = (key: "tokens" | "documents"): BarRow[] =>
      splitNames
        .filter((s) => ts[s])
        .map((s) => ({
          label: s,
          parts: sources
            .map((src, i) => ({ src, i, g: ts[s].by_source[src] }))
            .filter((x) => x.g)
            .map((x) => ({ cls: sourceClass(x.i), label: x.src, value: x.g[key], fig: ["token_stats", s, "by_source", x.src, key] })),
        }));
    parts.push(
      `<figure>${hbars({ title: "Tokens per split, by source", desc: `Document tokens in each split, stacked by the source they came from (${sources.join(", ")}).`, rows: rows("tokens"), unit: "tokens" })}` +
        `<figcaption>Tokens per split and source, end-of-text included, each document counted once (repeats by source weight or mixture are not drawn).</figcaption></figure>`,
    );
    parts.push(
      `<figure>${hbars({ title: "Documents per split, by source", desc: `Documents in each split, stacked by source.`, rows: rows("documents"), unit: "documents" })}` +
        `<figcaption>Documents per split and source, each counted once.</figcaption></figure>`,
    );
  } else {
    const rows: BarRow[] = splitNames.map((s) => ({ label: s, parts: [{ cls: sourceClass(0), label: "tokens", value: f.splits[s].tokens, fig: ["splits", s, "tokens"] }] }));
    parts.push(`<figure>${hbars({ title: "Tokens per split", desc: "Document tokens in each split.", rows, unit: "tokens" })}<figcaption>This manifest has no per-source token statistics.</figcaption></figure>`);
  }

  parts.push(
    table({
      caption: "Splits as packed (documents and tokens include repeats by source weight or mixture)",
      head: ["split", "documents", "blocks", "tokens", "target tokens", "padding tokens", "padding", "shards"],
      rows: splitNames.map((s) => {
        const x = f.splits[s];
        return [esc(s), fig(["splits", s, "documents"], x.documents), fig(["splits", s, "blocks"], x.blocks), fig(["splits", s, "tokens"], x.tokens), fig(["splits", s, "target_tokens"], x.target_tokens), fig(["splits", s, "padding_tokens"], x.padding_tokens), fig(["splits", s, "padding_fraction"], x.padding_fraction, pct(x.padding_fraction, 2)), int(x.shards)];
      }),
      numeric: [1, 2, 3, 4, 5, 6, 7],
    }),
  );

  const allTokens = sources.reduce((a, s) => a + (m.records.by_source[s].tokens ?? 0), 0);
  parts.push(
    table({
      caption: "Sources: what happened to their records, and their share of the tokens (repeats included)",
      head: ["source", "read", "kept", "dropped", "quarantined", "tokens", "token share"],
      rows: sources.map((src, i) => {
        const s = m.records.by_source[src];
        return [`<span class="swatch-inline ${sourceClass(i)}" aria-hidden="true"></span>${esc(src)}`, fig(["records", "by_source", src, "read"], s.read), fig(["records", "by_source", src, "kept"], s.kept), fig(["records", "by_source", src, "dropped"], s.dropped), fig(["records", "by_source", src, "quarantined"], s.quarantined), fig(["records", "by_source", src, "tokens"], s.tokens ?? 0), pct((s.tokens ?? 0) / Math.max(1, allTokens))];
      }),
      numeric: [1, 2, 3, 4, 5, 6],
    }),
  );

  if (ts) {
    const rows: string[][] = [];
    for (const s of Object.keys(ts)) {
      for (const [src, g, path] of [["all", ts[s].all, [s, "all"]] as const, ...Object.entries(ts[s].by_source).map(([k, g]) => [k, g, [s, "by_source", k]] as const)]) {
        const p = (...k: string[]) => ["token_stats", ...path, ...k];
        rows.push([
          esc(s),
          src === "all" ? "<em>all</em>" : esc(src),
          fig(p("documents"), g.documents),
          fig(p("tokens"), g.tokens),
          fig(p("bytes_per_token"), g.bytes_per_token, g.bytes_per_token.toFixed(2)),
          fig(p("mean_tokens"), g.mean_tokens, g.mean_tokens.toFixed(1)),
          fig(p("percentiles", "p50"), g.percentiles.p50),
          fig(p("percentiles", "p90"), g.percentiles.p90),
          fig(p("percentiles", "p99"), g.percentiles.p99),
          fig(p("percentiles", "max"), g.percentiles.max),
        ]);
      }
    }
    parts.push(
      table({
        caption: "Document length in tokens per split and source (each document once)",
        head: ["split", "source", "documents", "tokens", "bytes/token", "mean", "p50", "p90", "p99", "max"],
        rows,
        numeric: [2, 3, 4, 5, 6, 7, 8, 9],
      }),
    );
  }
  parts.push(`<p class="small">Token counts include the end-of-text token of each document; the tokenizer is <code>${esc(m.tokenizer.name)}</code> (${fig(["tokenizer", "vocab_size"], m.tokenizer.vocab_size)} ids).</p>`);
  return parts.join("\n");
}
