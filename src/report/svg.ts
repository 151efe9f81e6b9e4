// The frame every report chart shares: an inline SVG with an accessible name and description, and small drawing helpers.
import { esc, type FigPath } from "./html.js";

let counter = 0;

/** Resets the id counter, so two reports of the same build are byte-identical. */
export function resetIds(): void {
  counter = 0;
}

export interface ChartFrame {
  width: number;
  height: number;
  /** Read out as the chart's name. */
  title: string;
  /** Read out after the name: what the chart shows, in words (the numbers are in the table beside it). */
  desc: string;
  body: string;
  /**
   * How mark sizes relate to their values: "linear" (width or height proportional to data-value
   * across the chart), "share" (proportional to the value's share of its row) or "log".
   */
  scale?: "linear" | "share" | "log";
}

/**
 * role="img" with title and desc makes a screen reader announce the chart as one picture with a
 * caption, instead of reading out every bar; the tables next to the charts carry the numbers.
 * Width follows the page (CSS) up to the drawn size; the viewBox keeps proportions.
 */
export function chart(f: ChartFrame): string {
  const id = `c${++counter}`;
  return (
    `<svg class="chart"${f.scale ? ` data-scale="${f.scale}"` : ""} role="img" aria-labelledby="${id}-t ${id}-d" viewBox="0 0 ${f.width} ${f.height}" width="${f.width}" height="${f.height}" xmlns="http://www.w3.org/2000/svg">` +
    `<title id="${id}-t">${esc(f.title)}</title><desc id="${id}-d">${esc(f.desc)}</desc>\n${f.body}\n</svg>`
  );
}

/** Two decimals at most: shorter files, and sub-pixel precision nobody sees. */
export function n2(x: number): string {
  return String(Math.round(x * 100) / 100);
}

/** A data mark: a rectangle carrying the figure it draws (its path and value) and a hover title. */
export function mark(o: { x: number; y: number; w: number; h: number; cls: string; value: number; fig?: FigPath; tip: string }): string {
  const f = o.fig ? ` data-fig="${esc(JSON.stringify(o.fig))}"` : "";
  return `<rect class="mark ${o.cls}" x="${n2(o.x)}" y="${n2(o.y)}" width="${n2(Math.max(0, o.w))}" height="${n2(Math.max(0, o.h))}" data-value="${o.value}"${f}><title>${esc(o.tip)}</title></rect>`;
}

export function text(x: number, y: number, s: string, attrs = ""): string {
  return `<text x="${n2(x)}" y="${n2(y)}"${attrs ? " " + attrs : ""}>${esc(s)}</text>`;
}

export function line(x1: number, y1: number, x2: number, y2: number, cls = "grid"): string {
  return `<line class="${cls}" x1="${n2(x1)}" y1="${n2(y1)}" x2="${n2(x2)}" y2="${n2(y2)}"/>`;
}

/**
 * Round tick values for an axis from 0 to at least `max`: multiples of 1, 2 or 5 times a power of
 * ten, about `count` of them, the last one at or above `max` so the scale ends on a labelled line.
 */
export function ticks(max: number, count = 4): number[] {
  if (max <= 0) return [0, 1];
  const raw = max / count;
  const p = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((k) => k * p).find((s) => s >= raw) ?? 10 * p;
  const out: number[] = [0];
  while (out[out.length - 1] < max - 1e-9) out.push(Math.round(out.length * step * 1e6) / 1e6);
  return out;
}

/** A compact tick label: 12k, 3.4M. */
export function short(v: number): string {
  if (v >= 1e9) return `${n2(v / 1e9)}G`;
  if (v >= 1e6) return `${n2(v / 1e6)}M`;
  if (v >= 1e4) return `${n2(v / 1e3)}k`;
  return String(v);
}
