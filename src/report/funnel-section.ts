// The records funnel section: a waterfall chart from records read to records kept per split, and the tables behind it.
import type { Manifest } from "../output/manifest.js";
import { esc, fig, int, note, pct, table } from "./html.js";
import { chart, line, mark, text } from "./svg.js";
import { splitClass } from "./palette.js";
import { legendList } from "./hbars.js";
import { funnelOf, type Funnel } from "./funnel.js";

const LABEL_W = 230;
const RIGHT_W = 70;
const ROW_H = 20;
const GAP = 6;

function funnelChart(f: Funnel, width = 720): string {
  const plotW = width - LABEL_W - RIGHT_W;
  const max = Math.max(1, f.read);
  const x = (v: number) => LABEL_W + (v / max) * plotW;
  const out: string[] = [];
  const rows = 2 + f.steps.length;
  const H = 10 + rows * (ROW_H + GAP) + 8;
  const rowY = (i: number) => 10 + i * (ROW_H + GAP);
  const label = (i: number, s: string) => text(LABEL_W - 8, rowY(i) + ROW_H / 2 + 4.5, s, 'class="label" text-anchor="end"');
  const right = (i: number, end: number, s: string) => text(end + 6, rowY(i) + ROW_H / 2 + 4.5, s, 'class="value"');

  out.push(label(0, "read"), mark({ x: LABEL_W, y: rowY(0), w: x(f.read) - LABEL_W, h: ROW_H, cls: "keep", value: f.read, fig: ["records", "read"], tip: `${int(f.read)} records read` }), right(0, x(f.read), int(f.read)));
  f.steps.forEach((s, k) => {
    const i = k + 1;
    out.push(label(i, s.label));
    out.push(`<rect class="rest" x="${LABEL_W}" y="${rowY(i)}" width="${(x(s.after) - LABEL_W).toFixed(2)}" height="${ROW_H}"/>`);
    out.push(mark({ x: x(s.after), y: rowY(i), w: x(s.before) - x(s.after), h: ROW_H, cls: "drop", value: s.count, fig: ["records", "by_reason", s.reason], tip: `${s.stage}: ${int(s.count)} ${s.label} (${pct(s.count / max)} of the records read)` }));
    out.push(right(i, x(s.before), `−${int(s.count)}`));
  });
  const last = rows - 1;
  out.push(label(last, "kept, by split"));
  let at = LABEL_W;
  f.splits.forEach((s, i) => {
    const w = x(s.records) - LABEL_W;
    out.push(mark({ x: at, y: rowY(last), w, h: ROW_H, cls: splitClass(s.name, i), value: s.records, fig: ["records", "by_split", s.name], tip: `${s.name}: ${int(s.records)} records` }));
    at += w;
  });
  out.push(right(last, at, int(f.kept)));
  out.push(line(LABEL_W, 4, LABEL_W, H - 4, "axis"));
  return chart({
    width,
    height: H,
    title: "Records from input to splits",
    desc: `${int(f.read)} records read; ${f.steps.length} drop reasons remove ${int(f.read - f.kept)}; ${int(f.kept)} are kept: ${f.splits.map((s) => `${s.name} ${int(s.records)}`).join(", ")}.`,
    body: out.join("\n"),
    scale: "linear",
  });
}

export function funnelSection(m: Manifest, quarantine: { file: string; line: number; error: string }[]): string {
  const f = funnelOf(m);
  const r = m.records;
  const parts: string[] = [];
  parts.push(
    `<p>${fig(["records", "read"], r.read)} records were read: ${fig(["records", "kept"], r.kept)} kept, ${fig(["records", "dropped"], r.dropped)} dropped by a stage and ` +
      `${fig(["records", "quarantined"], r.quarantined)} unreadable. Each row below is one reason, in pipeline order; the bar is what was left before it, its coloured end what the reason removed.</p>`,
  );
  const legend = legendList([
    { cls: "keep", label: "records read" },
    { cls: "rest", label: "left before the reason" },
    { cls: "drop", label: "removed by the reason" },
    ...f.splits.map((s, i) => ({ cls: splitClass(s.name, i), label: `kept in ${s.name}` })),
  ]);
  parts.push(`<figure>${funnelChart(f)}${legend}<figcaption>Records read, each drop reason in pipeline order, and the records kept per split (before repeats by source weight or mixture).</figcaption></figure>`);
  const rows = f.steps.map((s) => [esc(s.stage), `${esc(s.label)} <code>${esc(s.reason)}</code>`, fig(["records", "by_reason", s.reason], s.count), int(s.after), pct(s.count / Math.max(1, f.read))]);
  parts.push(
    table({
      caption: "Drops per reason",
      head: ["stage", "reason", "records", "left after", "of read"],
      rows: [["read", "records read", fig(["records", "read"], r.read), int(r.read), "100.0 %"], ...rows, ["kept", "records kept", fig(["records", "kept"], r.kept), int(r.kept), pct(r.kept / Math.max(1, f.read))]],
      numeric: [2, 3, 4],
    }),
  );
  if (f.idle.length > 0) parts.push(`<p class="small">Stages that dropped no record: ${f.idle.map((s) => `<code>${esc(s)}</code>`).join(", ")}.</p>`);
  const counts = Object.entries((m.stage_counts as Record<string, number> | undefined) ?? {});
  if (counts.length > 0) {
    parts.push(
      table({
        caption: "Stage counters (what stages counted besides drops)",
        head: ["counter", "count"],
        rows: counts.map(([k, v]) => [`<code>${esc(k)}</code>`, fig(["stage_counts", k], v)]),
        numeric: [1],
      }),
    );
  }
  if (quarantine.length > 0) {
    parts.push(
      table({
        caption: r.quarantined > quarantine.length ? `Unreadable records (the first ${quarantine.length} of ${int(r.quarantined)}, from quarantine.jsonl)` : "Unreadable records (quarantine.jsonl)",
        head: ["file", "line", "error"],
        rows: quarantine.map((q) => [`<code>${esc(q.file)}</code>`, int(q.line), esc(q.error)]),
        numeric: [1],
      }),
    );
  } else if (r.quarantined === 0) parts.push(note("No input record was unreadable."));
  return parts.join("\n");
}
