// The report's mixture section: per source the share asked and achieved, the tokens available and used, the epochs.
import type { Manifest } from "../output/manifest.js";
import type { MixtureEntry } from "../engine/mixture.js";
import { esc, fig, pct, table } from "./html.js";

export function mixtureSection(m: Manifest): string {
  const x = m.mixture as MixtureEntry | undefined;
  if (!x) return `<p>This build has no mixture by token budget (sources enter train once, or as their <code>weight</code> says).</p>`;
  const budget = x.budget_from === "asked" ? "as asked" : "the largest that repeats no source";
  const parts = [
    `<p>Train budget ${fig(["mixture", "train_tokens"], x.train_tokens)} document tokens (${esc(budget)}); ${fig(["mixture", "tokens_used"], x.tokens_used)} used. Held-out splits keep their natural proportions.</p>`,
    table({
      caption: "Mixture of the train split by source",
      head: ["source", "share asked", "achieved", "tokens available", "tokens used", "epochs"],
      rows: x.sources.map((s, i) => {
        const p = (k: string) => ["mixture", "sources", i, k];
        return [esc(s.group ? `${s.source} (${s.group})` : s.source), fig(p("share"), s.share, pct(s.share, 1)), fig(p("achieved_share"), s.achieved_share, pct(s.achieved_share, 2)), fig(p("tokens_available"), s.tokens_available), fig(p("tokens_used"), s.tokens_used), fig(p("epochs"), s.epochs, s.epochs.toFixed(2))];
      }),
      numeric: [1, 2, 3, 4, 5],
    }),
  ];
  for (const w of x.warnings) parts.push(`<p class="warn"><strong>Warning:</strong> ${esc(w)}</p>`);
  return parts.join("\n");
}
