// Assembles the report page: head with the stylesheet, a header with the key figures, navigation, sections, footer.
import type { Manifest } from "../output/manifest.js";
import { esc, fig, int, pct, section, type Section } from "./html.js";
import { STYLE } from "./style.js";

/**
 * The page allows no network access at all (Content-Security-Policy: nothing but its own inline
 * style and data: images), so an opened report can never fetch anything, and runs no script:
 * the figures JSON block is data, which browsers do not execute.
 */
const CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:";

function cards(m: Manifest): string {
  const splits = Object.values(m.splits);
  const tokens = splits.reduce((a, s) => a + s.tokens, 0);
  const blocks = splits.reduce((a, s) => a + s.blocks, 0);
  const padding = splits.reduce((a, s) => a + s.padding_tokens, 0);
  const card = (label: string, value: string) => `<div><dt>${esc(label)}</dt><dd>${value}</dd></div>`;
  return (
    `<dl class="cards">` +
    card("records read", fig(["records", "read"], m.records.read)) +
    card("records kept", fig(["records", "kept"], m.records.kept)) +
    card("tokens in blocks", int(tokens)) +
    card(`blocks of ${int(m.length)}`, int(blocks)) +
    card("padding", pct(padding / Math.max(1, blocks * m.length))) +
    `</dl>`
  );
}

export interface PageInput {
  /** The build directory as the user named it. */
  dir: string;
  manifest: Manifest;
  sections: Section[];
  /** Embedded as JSON: the same object `siftpack stats --json` prints. */
  figures: unknown;
}

export function page(p: PageInput): string {
  const m = p.manifest;
  const nav = p.sections.map((s) => `<li><a href="#${s.id}">${esc(s.nav ?? s.title)}</a></li>`).join("");
  // "<" escaped inside the JSON block so no value can end the element early.
  const json = JSON.stringify(p.figures).replace(/</g, "\\u003c");
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="${CSP}">
<meta name="color-scheme" content="light dark">
<meta name="generator" content="siftpack ${esc(m.tool.version)}">
<title>Build report: ${esc(p.dir)} (build ${esc(m.build_hash)})</title>
<style>${STYLE}</style>
</head>
<body>
<a class="skip" href="#main">Skip to the report</a>
<header>
<h1>Build report: <code>${esc(p.dir)}</code></h1>
<p class="lede">${esc(m.pipeline.file)} · ${esc(m.tokenizer.name)} tokens in blocks of ${int(m.length)}, ${esc(m.strategy)} packing · build <code>${esc(m.build_hash)}</code></p>
${cards(m)}
</header>
<nav aria-label="Sections of the report"><ol>${nav}</ol></nav>
<main id="main" tabindex="-1">
${p.sections.map(section).join("\n")}
</main>
<footer>Written by siftpack ${esc(m.tool.version)} from <code>${esc(p.dir)}/manifest.json</code>; every figure above comes from that file or from the build's clusters.jsonl, ledger and shards. The page loads nothing from anywhere.</footer>
<script type="application/json" id="figures">${json}</script>
</body>
</html>
`;
}
