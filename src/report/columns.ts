// Vertical bars in one or more stacked panels (small multiples) over the same categories: histograms.
import type { FigPath } from "./html.js";
import { chart, line, mark, short, text, ticks } from "./svg.js";

export interface Column {
  /** Category label under the bar. */
  label: string;
  value: number;
  fig?: FigPath;
  tip: string;
}

export interface Panel {
  name: string;
  /** Colour class of the bars. */
  cls: string;
  columns: Column[];
}

export interface ColumnsOptions {
  title: string;
  desc: string;
  panels: Panel[];
  /** Caption of the category axis (under the last panel). */
  xCaption: string;
  /** Unit of the values, beside each panel's scale. */
  unit: string;
  width?: number;
}

const LEFT = 64;
const RIGHT = 16;
const PANEL_H = 120;
const PANEL_GAP = 46;

/**
 * Each panel gets its own value scale (labelled with its maximum): a small held-out split would be
 * a row of flat bars on the training split's scale. The categories line up across panels.
 */
export function columns(o: ColumnsOptions): string {
  const W = o.width ?? 720;
  const cats = o.panels[0]?.columns.length ?? 0;
  const slot = (W - LEFT - RIGHT) / Math.max(1, cats);
  const barW = Math.max(2, slot * 0.78);
  const out: string[] = [];
  o.panels.forEach((p, i) => {
    const top = 22 + i * (PANEL_H + PANEL_GAP);
    const base = top + PANEL_H;
    const tv = ticks(Math.max(0, ...p.columns.map((c) => c.value)), 3);
    const scaleMax = tv[tv.length - 1];
    // Heights are proportional to values within a panel (each panel has its own scale).
    out.push(`<g data-scale="linear">`, text(LEFT, top - 8, p.name, 'class="panel"'));
    for (const t of tv) {
      const y = base - (t / scaleMax) * PANEL_H;
      out.push(line(LEFT, y, W - RIGHT, y), text(LEFT - 6, y + 4, short(t), 'class="tick" text-anchor="end"'));
    }
    out.push(text(12, top + PANEL_H / 2, o.unit, `class="tick" text-anchor="middle" transform="rotate(-90 12 ${top + PANEL_H / 2})"`));
    p.columns.forEach((c, k) => {
      const h = (c.value / scaleMax) * PANEL_H;
      const x = LEFT + k * slot + (slot - barW) / 2;
      out.push(mark({ x, y: base - h, w: barW, h, cls: p.cls, value: c.value, fig: c.fig, tip: c.tip }));
      out.push(text(x + barW / 2, base + 15, c.label, 'class="tick" text-anchor="middle"'));
    });
    out.push(line(LEFT, base, W - RIGHT, base, "axis"), `</g>`);
  });
  const H = 22 + o.panels.length * (PANEL_H + PANEL_GAP) - 6;
  out.push(text(LEFT + (W - LEFT - RIGHT) / 2, H - 4, o.xCaption, 'class="tick" text-anchor="middle"'));
  return chart({ width: W, height: H, title: o.title, desc: o.desc, body: out.join("\n") });
}
