// Draws a row's attention mask as a PNG: the same picture as the SVG, without text (pixels only).
import { encodePng } from "./png.js";
import { segmentRuns } from "./segment-runs.js";
import { MASK_PALETTE, pictureSide } from "./mask-svg.js";

const MARGIN = 12;

/**
 * Pixel (x, y) of the mask area stands for key tokens [j0, j1) and query tokens [i0, i1); it is
 * painted in the colour of a piece that holds an allowed pair there (j ≤ i, same segment), else
 * left white. With at least one pixel per token that is the exact mask, cell by cell; a long row is
 * shrunk to `maxSide` pixels, and a pixel that holds any allowed pair is painted, so even a
 * one-token document stays visible. Ticks in the top and left margins mark where each piece (and
 * the padding) begins. Given `targets` (a row with conversations), a black bar in the right margin
 * marks the query rows whose token is a target.
 */
export function maskPng(segments: ArrayLike<number>, maxSide = 800, targets?: ArrayLike<number>): { png: Uint8Array; width: number; height: number } {
  const L = segments.length;
  const side = pictureSide(L, maxSide);
  const W = side + 2 * MARGIN;
  const px = new Uint8Array(W * W * 3).fill(255);
  const put = (x: number, y: number, rgb: readonly number[]) => px.set(rgb, (y * W + x) * 3);
  const colours = MASK_PALETTE.map((h) => [1, 3, 5].map((k) => parseInt(h.slice(k, k + 2), 16)));
  const runs = segmentRuns(segments);
  const pieces = runs.filter((r) => r.segment !== 0);
  const lo = (p: number) => Math.floor((p * L) / side);
  const hi = (p: number) => Math.max(lo(p) + 1, Math.floor(((p + 1) * L) / side));

  let first = 0;
  for (let y = 0; y < side; y++) {
    const i0 = lo(y);
    const i1 = hi(y);
    while (first < pieces.length && pieces[first].end <= i0) first++;
    for (let x = 0; x < side; x++) {
      const j0 = lo(x);
      const j1 = hi(x);
      for (let k = first; k < pieces.length && pieces[k].start < i1; k++) {
        const r = pieces[k];
        // Some j in r ∩ [j0, j1) and i in r ∩ [i0, i1) with j ≤ i.
        if (r.start < j1 && r.end > j0 && Math.max(r.start, j0) <= Math.min(r.end, i1) - 1) {
          put(MARGIN + x, MARGIN + y, colours[(r.segment - 1) % colours.length]);
          break;
        }
      }
    }
  }
  const grey = [136, 136, 136];
  for (let t = MARGIN - 1; t <= MARGIN + side; t++) {
    put(t, MARGIN - 1, grey);
    put(t, MARGIN + side, grey);
    put(MARGIN - 1, t, grey);
    put(MARGIN + side, t, grey);
  }
  const dark = [68, 68, 68];
  for (const r of runs) {
    const p = MARGIN + Math.floor((r.start * side) / L);
    for (let d = 2; d < MARGIN - 1; d++) {
      put(p, d, dark);
      put(d, p, dark);
    }
  }
  if (targets) {
    for (let y = 0; y < side; y++) {
      let any = false;
      for (let i = lo(y); i < hi(y) && !any; i++) any = targets[i] !== 0;
      if (any) for (let d = 2; d < MARGIN - 1; d++) put(MARGIN + side + d, MARGIN + y, [0, 0, 0]);
    }
  }
  return { png: encodePng(W, W, px), width: W, height: W };
}
