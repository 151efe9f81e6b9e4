// The runs of equal segment ids in one row: each document piece, and the padding, as [start, end).

export interface SegmentRun {
  /** Segment id (0 = padding). */
  segment: number;
  start: number;
  /** Exclusive. */
  end: number;
}

export function segmentRuns(segments: ArrayLike<number>): SegmentRun[] {
  const out: SegmentRun[] = [];
  for (let i = 0; i < segments.length; i++) {
    const last = out[out.length - 1];
    if (last && last.segment === segments[i]) last.end = i + 1;
    else out.push({ segment: segments[i], start: i, end: i + 1 });
  }
  return out;
}
