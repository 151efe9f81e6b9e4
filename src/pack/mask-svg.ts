// Draws a row's attention mask as a standalone SVG: one causal triangle per document piece, padding blank.
import { maskShapes } from "./mask-shape.js";
import { segmentRuns } from "./segment-runs.js";

/** Okabe & Ito's colour-blind-safe palette (Color Universal Design, 2008), without black and the pale yellow. */
export const MASK_PALETTE = ["#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00"];

/** Side of the mask area in pixels: whole pixels per token up to `maxSide`, else `maxSide` (downsampled). */
export function pictureSide(L: number, maxSide: number): number {
  return L <= maxSide ? L * Math.max(1, Math.floor(maxSide / L)) : maxSide;
}

export interface MaskPictureOptions {
  /** First line above the picture. */
  title: string;
  /** Largest side of the mask area in pixels (default 800). */
  maxSide?: number;
  /** The row's target mask, for a row holding conversations: drawn as a bar beside the mask on the rows trained on. */
  targets?: ArrayLike<number>;
}

export interface MaskPicture {
  svg: string;
  /** Pixels per token (below 1 when the row is downsampled). */
  scale: number;
  /** Tokens per stair step of the drawn outline (1 = exact). */
  step: number;
}

function esc(s: string): string {
  return s.replace(/&/g, "&amp;").replace(/</g, "&lt;").replace(/>/g, "&gt;").replace(/"/g, "&quot;");
}

/**
 * Short rows get large cells (whole pixels per token, up to `maxSide`), so a reader can count
 * tokens; long rows are shrunk to `maxSide` pixels and their outlines coarsened to whole pixels
 * (see maskShapes), so the file stays small and every document stays visible.
 */
export function maskSvg(segments: ArrayLike<number>, o: MaskPictureOptions): MaskPicture {
  const L = segments.length;
  const maxSide = o.maxSide ?? 800;
  const side = pictureSide(L, maxSide);
  const scale = side / L;
  const step = Math.max(1, Math.ceil(L / side));
  const [ml, mt, mr, mb] = [64, 76, o.targets ? 40 : 24, o.targets ? 82 : 64];
  // Wide enough for the legend even when the mask is small.
  const W = Math.max(ml + side + mr, 560);
  const H = mt + side + mb;
  const runs = segmentRuns(segments);
  const pieces = runs.filter((r) => r.segment !== 0);
  const padding = runs.filter((r) => r.segment === 0).reduce((a, r) => a + r.end - r.start, 0);
  const px = (t: number) => +(t * scale).toFixed(2);

  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" font-family="sans-serif" font-size="12">`);
  out.push(`<rect width="${W}" height="${H}" fill="#ffffff"/>`);
  out.push(`<text x="${ml}" y="22" font-size="15" font-weight="bold">${esc(o.title)}</text>`);
  out.push(
    `<text x="${ml}" y="42">${L} tokens: ${pieces.length} document piece${pieces.length === 1 ? "" : "s"}, ${padding} padding${step > 1 ? ` · downsampled, ${step} tokens per pixel step` : ""}</text>`,
  );
  out.push(`<text x="${ml + side / 2}" y="${mt - 8}" text-anchor="middle" fill="#444">key position j →</text>`);
  out.push(`<text transform="translate(${ml - 40} ${mt + side / 2}) rotate(-90)" text-anchor="middle" fill="#444">← query position i</text>`);

  out.push(`<g transform="translate(${ml} ${mt})">`);
  // Shapes in token units, scaled as a group; crisp edges keep one-token cells sharp.
  out.push(`<g transform="scale(${scale})" shape-rendering="crispEdges">`);
  for (const s of maskShapes(segments, step)) {
    const d = "M" + s.points.map(([x, y]) => `${x} ${y}`).join("L") + "Z";
    out.push(`<path d="${d}" fill="${MASK_PALETTE[(s.segment - 1) % MASK_PALETTE.length]}"><title>segment ${s.segment}: tokens ${s.start}–${s.end - 1}</title></path>`);
  }
  out.push(`</g>`);
  // Piece boundaries: ticks on both axes, labelled where there is room.
  let lastLabel = -Infinity;
  for (const r of runs) {
    const p = px(r.start);
    out.push(`<line x1="${p}" y1="-5" x2="${p}" y2="0" stroke="#444"/><line x1="-5" y1="${p}" x2="0" y2="${p}" stroke="#444"/>`);
    if (p - lastLabel >= 28) {
      out.push(`<text x="-8" y="${p + 4}" text-anchor="end" font-size="10" fill="#444">${r.start}</text>`);
      lastLabel = p;
    }
    const len = (r.end - r.start) * scale;
    if (r.segment !== 0 && len >= 24) {
      out.push(`<text x="${px(r.start + (r.end - r.start) / 3)}" y="${px(r.start + (2 * (r.end - r.start)) / 3) + 4}" text-anchor="middle" fill="#ffffff" font-weight="bold">${r.segment}</text>`);
    }
    if (r.segment === 0 && len >= 80) {
      out.push(`<text x="${px((r.start + r.end) / 2)}" y="${px((r.start + r.end) / 2)}" text-anchor="middle" fill="#888">padding</text>`);
    }
  }
  out.push(`<text x="-8" y="${side + 4}" text-anchor="end" font-size="10" fill="#444">${L}</text>`);
  out.push(`<rect width="${side}" height="${side}" fill="none" stroke="#888"/>`);
  if (o.targets) {
    // One bar segment per run of target rows: the queries whose next-token loss counts (a conversation's trained roles).
    const t = o.targets;
    for (let i = 0; i < L; ) {
      let j = i;
      while (j < L && (t[j] !== 0) === (t[i] !== 0)) j++;
      if (t[i]) out.push(`<rect x="${side + 6}" y="${px(i)}" width="10" height="${Math.max(0.5, px(j) - px(i))}" fill="#000000"><title>targets: tokens ${i}–${j - 1}</title></rect>`);
      i = j;
    }
  }
  out.push(`</g>`);
  out.push(`<text x="${ml}" y="${mt + side + 24}">filled: query i may attend to key j (j ≤ i, same segment)</text>`);
  out.push(`<text x="${ml}" y="${mt + side + 42}" fill="#444">blank: masked or padding · colours only tell neighbouring pieces apart</text>`);
  if (o.targets) out.push(`<text x="${ml}" y="${mt + side + 60}" fill="#444">black bar on the right: rows i whose token is a target (the conversation's trained roles)</text>`);
  out.push(`</svg>`);
  return { svg: out.join("\n") + "\n", scale, step };
}
