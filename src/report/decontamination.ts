// Decontamination as the build did it (manifest "decontamination"): the share of checked training
// records removed, against the warning threshold, and the protected n-grams found in most records.
import type { Manifest } from "../output/manifest.js";
import { esc, fig, note, pct, table } from "./html.js";
import { hbars } from "./hbars.js";
import type { DecontaminationEntry as Entry } from "../stages/decontaminate-report.js";

/** `quoteText` false: the n-grams are words of the input, so they are left out (report --no-excerpts). */
export function decontaminationSection(m: Manifest, quoteText = true): string {
  const list = m.decontamination as Entry[] | undefined;
  if (!Array.isArray(list) || list.length === 0) return note("The pipeline has no decontaminate stage.");
  return list.map((d, k) => entry(d, k, quoteText)).join("\n");
}

function entry(d: Entry, k: number, quoteText: boolean): string {
  const p = (...keys: (string | number)[]) => ["decontamination", k, ...keys];
  const key = d.action === "mark" ? "marked" : "dropped";
  const removed = d[key] ?? 0;
  const chart = hbars({
    title: `Checked training records ${key} by ${d.file}`,
    desc: `${removed} of ${d.checked} (${pct(d.share)}); warning above ${pct(d.warn_share)}`,
    rows: [
      {
        label: "train",
        parts: [
          { cls: "drop", label: key, value: removed, fig: p(key) },
          { cls: "rest", label: "kept", value: d.checked - removed },
        ],
      },
    ],
    unit: "records",
    shares: true,
  });
  const warning = d.above_warning
    ? `<p class="warn"><strong>Above the warning threshold:</strong> ${fig(p("share"), d.share, pct(d.share))} of the checked training records were ${key}, more than warn_share ${fig(p("warn_share"), d.warn_share, pct(d.warn_share))}. ${d.boilerplate_docs === undefined ? "If the n-grams below are shared by many records, they are probably the format's boilerplate rather than leaked test text: the stage's boilerplate_docs option ignores them." : ""}</p>`
    : `<p>${fig(p("share"), d.share, pct(d.share))} of the checked training records were ${key} (warning above ${fig(p("warn_share"), d.warn_share, pct(d.warn_share))}).</p>`;
  const ignored =
    d.boilerplate_docs !== undefined
      ? `<p>Ignored as boilerplate: ${fig(p("ignored_ngrams"), d.ignored_ngrams ?? 0)} n-grams found in more than ${fig(p("boilerplate_docs"), d.boilerplate_docs)} training records; ${fig(p("boilerplate_only"), d.boilerplate_only ?? 0)} records shared only those and were kept.</p>`
      : "";
  const rows = d.top_ngrams.map((g, i) => [quoteText ? `<q>${esc(g.ngram)}</q>` : `n-gram ${i + 1}`, fig(p("top_ngrams", i, "records"), g.records), g.ignored ? "ignored (boilerplate)" : "matched"]);
  const top = rows.length
    ? table({ caption: `Protected ${d.ngram}-grams found in most checked training records`, head: ["n-gram", "records", ""], rows, numeric: [1] })
    : note("No training record shares an n-gram with the protected texts.");
  return (
    `<p>Training records checked against the protected texts (${esc(d.file)} lists every match): ${fig(p("checked"), d.checked)}.</p>\n` +
    warning +
    `\n<figure>${chart}<figcaption>Checked training records ${key} for sharing a word ${d.ngram}-gram with a protected text.</figcaption></figure>\n` +
    ignored +
    top
  );
}
