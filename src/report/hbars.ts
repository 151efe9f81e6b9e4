// Horizontal bars, one row per category, optionally stacked from parts; a legend on top and an axis below.
import { esc, int, pct, type FigPath } from "./html.js";
import { chart, line, mark, short, text, ticks } from "./svg.js";

export interface BarPart {
  /** CSS class giving the colour (s0…s5, keep, drop, pad). */
  cls: string;
  /** Legend label. */
  label: string;
  value: number;
  fig?: FigPath;
}

export interface BarRow {
  label: string;
  parts: BarPart[];
}

export interface HBarsOptions {
  title: string;
  desc: string;
  rows: BarRow[];
  /** Unit for tooltips ("tokens", "documents"). */
  unit: string;
  /** Each row drawn as 100 % (parts as shares of the row); otherwise one linear scale for all rows. */
  shares?: boolean;
  width?: number;
}

const LABEL_W = 120;
const RIGHT_W = 84;
const ROW_H = 22;
const GAP = 8;

export function hbars(o: HBarsOptions): string {
  const W = o.width ?? 720;
  const legendKeys = [...new Map(o.rows.flatMap((r) => r.parts.map((p) => [p.cls, p.label] as const))).entries()];
  const top = legendKeys.length > 1 ? 30 : 8;
  const plotW = W - LABEL_W - RIGHT_W;
  const H = top + o.rows.length * (ROW_H + GAP) + 28;
  const totals = o.rows.map((r) => r.parts.reduce((a, p) => a + p.value, 0));
  const max = Math.max(0, ...totals);
  const out: string[] = [];

  // Legend: a swatch and a label per part kind, in order of first appearance.
  let lx = LABEL_W;
  for (const [cls, label] of legendKeys.length > 1 ? legendKeys : []) {
    out.push(`<rect class="swatch ${cls}" x="${lx}" y="6" width="12" height="12"/>`, text(lx + 17, 16.5, label, 'class="legend"'));
    lx += 17 + 7.2 * label.length + 18;
  }

  // Axis: gridlines with values, or 0–100 % for shares.
  const axisY = top + o.rows.length * (ROW_H + GAP);
  const tickValues = o.shares ? [0, 0.25, 0.5, 0.75, 1] : ticks(max);
  const scaleMax = o.shares ? 1 : tickValues[tickValues.length - 1];
  for (const t of tickValues) {
    const x = LABEL_W + (t / scaleMax) * plotW;
    out.push(line(x, top - 4, x, axisY), text(x, axisY + 16, o.shares ? `${Math.round(t * 100)} %` : short(t), 'class="tick" text-anchor="middle"'));
  }

  o.rows.forEach((r, i) => {
    const y = top + i * (ROW_H + GAP);
    const total = totals[i];
    out.push(text(LABEL_W - 8, y + ROW_H / 2 + 4.5, r.label, 'class="label" text-anchor="end"'));
    let x = LABEL_W;
    for (const p of r.parts) {
      const w = o.shares ? (total > 0 ? (p.value / total) * plotW : 0) : (p.value / scaleMax) * plotW;
      const share = total > 0 ? ` (${pct(p.value / total)} of ${r.label})` : "";
      out.push(mark({ x, y, w, h: ROW_H, cls: p.cls, value: p.value, fig: p.fig, tip: `${r.label} · ${p.label}: ${int(p.value)} ${o.unit}${share}` }));
      x += w;
    }
    const end = o.shares ? LABEL_W + plotW : x;
    out.push(text(end + 6, y + ROW_H / 2 + 4.5, `${int(total)}`, 'class="value"'));
  });
  return chart({ width: W, height: H, title: o.title, desc: o.desc, body: out.join("\n"), scale: o.shares ? "share" : "linear" });
}

/** A short list of the colours and what they mean, for charts whose legend would not fit. */
export function legendList(items: { cls: string; label: string }[]): string {
  return `<ul class="legend-list">${items.map((i) => `<li><span class="swatch-inline ${i.cls}" aria-hidden="true"></span>${esc(i.label)}</li>`).join("")}</ul>`;
}
