// The report's stylesheet: light and dark colour schemes, print rules, visible keyboard focus; no external fonts.

/**
 * Series colours: Okabe & Ito's colour-blind-safe palette on light backgrounds, and lighter tints
 * of the same hues on dark ones (the light-scheme blue and vermilion are too dark on near-black).
 * Text colours keep at least 4.5:1 contrast against their background in both schemes (WCAG AA).
 */
export const STYLE = `
:root {
  color-scheme: light dark;
  --bg: #ffffff; --fg: #1b1f24; --muted: #57606a; --line: #d0d7de; --grid: #e6e9ed; --panel: #f6f8fa;
  --link: #0a58ca; --focus: #b35900;
  --s0: #0072B2; --s1: #E69F00; --s2: #009E73; --s3: #CC79A7; --s4: #56B4E9; --s5: #D55E00;
  --keep: #8796a8; --rest: #d5dbe2; --drop: #D55E00; --pad: #b9b9b9;
}
@media (prefers-color-scheme: dark) {
  :root {
    --bg: #111418; --fg: #e6e9ec; --muted: #a3acb6; --line: #3a424b; --grid: #262c33; --panel: #1a1f25;
    --link: #7fb5ff; --focus: #ffb454;
    --s0: #4fa8e0; --s1: #f0b440; --s2: #35c49c; --s3: #e09ac4; --s4: #8fd0f5; --s5: #f28a50;
    --keep: #7d8ea3; --rest: #323a44; --drop: #f28a50; --pad: #5c5c5c;
  }
}
* { box-sizing: border-box; }
html { background: var(--bg); color: var(--fg); }
body { margin: 0 auto; max-width: 62rem; padding: 0 1.25rem 3rem; font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "DejaVu Sans", sans-serif; }
code, pre { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, "DejaVu Sans Mono", monospace; font-size: 0.9em; }
a { color: var(--link); }
a:focus-visible, [tabindex]:focus-visible, summary:focus-visible { outline: 3px solid var(--focus); outline-offset: 2px; border-radius: 2px; }
.skip { position: absolute; left: -999px; top: 0.5rem; background: var(--bg); padding: 0.4rem 0.8rem; border: 2px solid var(--focus); z-index: 2; }
.skip:focus { left: 0.5rem; }
header { padding: 1.5rem 0 0.5rem; border-bottom: 1px solid var(--line); }
h1 { font-size: 1.6rem; margin: 0 0 0.25rem; }
h1 code { font-size: 0.85em; }
h2 { font-size: 1.3rem; margin: 2.2rem 0 0.6rem; padding-top: 0.4rem; border-top: 1px solid var(--line); }
h3 { font-size: 1.05rem; margin: 1.4rem 0 0.4rem; }
.lede { color: var(--muted); margin: 0 0 1rem; }
.cards { display: grid; grid-template-columns: repeat(auto-fit, minmax(9.5rem, 1fr)); gap: 0.6rem; margin: 1rem 0; padding: 0; }
.cards div { background: var(--panel); border: 1px solid var(--line); border-radius: 6px; padding: 0.55rem 0.75rem; }
.cards dt { font-size: 0.8rem; color: var(--muted); }
.cards dd { margin: 0; font-size: 1.25rem; font-weight: 600; font-variant-numeric: tabular-nums; }
nav ol { list-style: none; display: flex; flex-wrap: wrap; gap: 0.3rem 1.1rem; padding: 0.6rem 0; margin: 0; border-bottom: 1px solid var(--line); }
figure { margin: 1rem 0 1.2rem; break-inside: avoid; }
figcaption { color: var(--muted); font-size: 0.85rem; margin-top: 0.25rem; }
svg.chart { display: block; width: 100%; max-width: 100%; height: auto; }
svg.chart:not(.mask) text { fill: var(--fg); font-size: 12px; font-family: inherit; }
svg.chart:not(.mask) .tick, svg.chart:not(.mask) .legend { fill: var(--muted); font-size: 11px; }
svg.chart:not(.mask) .panel { font-weight: 600; }
svg.chart .grid { stroke: var(--grid); stroke-width: 1; }
svg.chart .axis { stroke: var(--muted); stroke-width: 1; }
figure.picture svg { max-width: 560px; border: 1px solid var(--line); border-radius: 4px; }
.s0 { fill: var(--s0); background: var(--s0); } .s1 { fill: var(--s1); background: var(--s1); } .s2 { fill: var(--s2); background: var(--s2); }
.s3 { fill: var(--s3); background: var(--s3); } .s4 { fill: var(--s4); background: var(--s4); } .s5 { fill: var(--s5); background: var(--s5); }
.keep { fill: var(--keep); background: var(--keep); } .rest { fill: var(--rest); background: var(--rest); } .drop { fill: var(--drop); background: var(--drop); } .pad { fill: var(--pad); background: var(--pad); }
.legend-list { list-style: none; display: flex; flex-wrap: wrap; gap: 0.2rem 1rem; padding: 0; margin: 0.3rem 0 0; font-size: 0.85rem; }
.swatch-inline { display: inline-block; width: 0.75em; height: 0.75em; border-radius: 2px; margin-right: 0.4em; vertical-align: baseline; }
rect.mark:hover { opacity: 0.8; }
.scroll { overflow-x: auto; margin: 0.8rem 0 1.2rem; }
table { border-collapse: collapse; font-size: 0.88rem; min-width: 50%; }
caption { text-align: left; font-weight: 600; padding: 0 0 0.35rem; }
th, td { padding: 0.25rem 0.7rem 0.25rem 0; border-bottom: 1px solid var(--line); text-align: left; vertical-align: top; }
thead th { color: var(--muted); font-weight: 600; border-bottom: 2px solid var(--line); }
tbody th { font-weight: 500; }
.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
q { font-style: italic; }
.small { font-size: 0.85rem; }
.muted, .note { color: var(--muted); }
.note { background: var(--panel); border-left: 4px solid var(--line); padding: 0.6rem 0.9rem; }
.warn { background: var(--panel); border-left: 4px solid var(--drop); padding: 0.6rem 0.9rem; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 0.25rem 1rem; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; overflow-wrap: anywhere; }
pre.yaml { background: var(--panel); border: 1px solid var(--line); border-radius: 6px; padding: 0.75rem; max-height: 28rem; overflow: auto; }
footer { margin-top: 3rem; color: var(--muted); font-size: 0.85rem; border-top: 1px solid var(--line); padding-top: 0.6rem; }
@media print {
  :root {
    --bg: #ffffff; --fg: #000000; --muted: #444444; --line: #bbbbbb; --grid: #e4e4e4; --panel: #ffffff;
    --s0: #0072B2; --s1: #E69F00; --s2: #009E73; --s3: #CC79A7; --s4: #56B4E9; --s5: #D55E00;
    --keep: #8796a8; --rest: #d5dbe2; --drop: #D55E00; --pad: #b9b9b9;
  }
  body { max-width: none; font-size: 10.5pt; }
  nav, .skip { display: none; }
  h2 { break-after: avoid; }
  table, pre.yaml { break-inside: auto; }
  tr { break-inside: avoid; }
  pre.yaml { max-height: none; overflow: visible; white-space: pre-wrap; }
  .scroll { overflow: visible; }
  * { print-color-adjust: exact; -webkit-print-color-adjust: exact; }
}
`;
