// The attention mask of a row as polygons: one causal triangle per document piece, padding left out.
import { segmentRuns } from "./segment-runs.js";

export interface MaskShape {
  segment: number;
  start: number;
  end: number;
  /** Polygon vertices in token coordinates: x = key position j, y = query position i (cell (i, j) is the unit square at x=j, y=i). */
  points: [number, number][];
}

/**
 * Token i may attend to token j iff j ≤ i and both are in the same non-zero segment, so the mask is
 * one lower triangle (diagonal included) per piece. Its exact outline is a staircase of unit steps.
 * With `step` > 1 the stairs are `step` tokens wide, which bounds the vertex count for long rows
 * (a picture cannot show steps narrower than a pixel anyway); the coarse staircase contains the
 * exact triangle and exceeds it by less than one step. A piece shorter than `step` is drawn as a
 * `step`-wide square (clipped to the row) so that every document stays visible.
 */
export function maskShapes(segments: ArrayLike<number>, step = 1): MaskShape[] {
  const L = segments.length;
  const shapes: MaskShape[] = [];
  for (const run of segmentRuns(segments)) {
    if (run.segment === 0) continue;
    const { start: s, end: e } = run;
    const points: [number, number][] = [];
    if (e - s < step) {
      const f = Math.min(L, s + step);
      points.push([s, s], [f, s], [f, f], [s, f]);
    } else {
      points.push([s, s]);
      for (let t = s; t < e; t += step) {
        const u = Math.min(t + step, e);
        points.push([u, t], [u, u]);
      }
      points.push([s, e]);
    }
    shapes.push({ segment: run.segment, start: s, end: e, points });
  }
  return shapes;
}
