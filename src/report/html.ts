// HTML text helpers for the report: escaping, number formats, tagged figures and plain tables.

export function esc(s: string): string {
  return s.replace(/&/g, "&amp;").replace(/</g, "&lt;").replace(/>/g, "&gt;").replace(/"/g, "&quot;");
}

/** 12,345: grouping makes large counts readable at a glance; fixed "en-US" so the file is the same everywhere. */
export function int(n: number): string {
  return Math.round(n).toLocaleString("en-US");
}

/** A fraction as a percentage with `digits` decimals ("7.03 %"). */
export function pct(fraction: number, digits = 1): string {
  return `${(100 * fraction).toFixed(digits)} %`;
}

export function bytes(n: number): string {
  if (n < 1024) return `${int(n)} B`;
  const units = ["KiB", "MiB", "GiB", "TiB"];
  let v = n / 1024;
  let u = 0;
  while (v >= 1024 && u < units.length - 1) {
    v /= 1024;
    u++;
  }
  return `${v.toFixed(v < 10 ? 1 : 0)} ${units[u]}`;
}

/** Where a figure comes from in manifest.json, as a list of keys (array indices as numbers). */
export type FigPath = (string | number)[];

/**
 * A figure copied from the manifest, tagged with its path and exact value, so a test (or a
 * reader's script) can check every number shown against manifest.json.
 */
export function fig(path: FigPath, value: number | string, shown?: string): string {
  const text = shown ?? (typeof value === "number" ? (Number.isInteger(value) ? int(value) : String(value)) : value);
  return `<span data-fig="${esc(JSON.stringify(path))}" data-value="${esc(String(value))}">${esc(text)}</span>`;
}

export type Cell = string | { html: string; num?: boolean; head?: boolean };

/** A table with a caption; cells are HTML (already escaped), numeric ones right-aligned. Wrapped so wide tables scroll. */
export function table(o: { caption: string; head: string[]; rows: Cell[][]; numeric?: number[]; label?: string }): string {
  const numeric = new Set(o.numeric ?? []);
  const th = o.head.map((h, i) => `<th scope="col"${numeric.has(i) ? ' class="num"' : ""}>${esc(h)}</th>`).join("");
  const body = o.rows
    .map((r) => {
      const cells = r.map((c, i) => {
        const cell = typeof c === "string" ? { html: c } : c;
        const cls = (cell.num ?? numeric.has(i)) ? ' class="num"' : "";
        // The first cell names the row, for screen readers.
        return i === 0 || cell.head ? `<th scope="row"${cls}>${cell.html}</th>` : `<td${cls}>${cell.html}</td>`;
      });
      return `<tr>${cells.join("")}</tr>`;
    })
    .join("\n");
  // A focusable region, so a wide table can be scrolled from the keyboard.
  return `<div class="scroll" role="region" tabindex="0" aria-label="${esc(o.label ?? o.caption)}"><table><caption>${esc(o.caption)}</caption><thead><tr>${th}</tr></thead><tbody>\n${body}\n</tbody></table></div>`;
}

/** A section of the page: an id for the navigation, a heading, an introduction and content. */
export interface Section {
  id: string;
  title: string;
  /** Short label for the navigation (the title when absent). */
  nav?: string;
  html: string;
}

export function section(s: Section): string {
  return `<section id="${s.id}" aria-labelledby="${s.id}-h">\n<h2 id="${s.id}-h">${esc(s.title)}</h2>\n${s.html}\n</section>`;
}

/** A paragraph saying why a part of the report is empty. */
export function note(text: string): string {
  return `<p class="note">${esc(text)}</p>`;
}
