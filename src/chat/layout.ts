// A conversation's token layout, as the tokenize stage leaves it beside the token ids: a few Uint32
// numbers per turn rather than a mask per token, so a record frame grows by 12 bytes a turn.
//
//   [start of the first turn, then per turn: role index, first target token, end of the turn]
//
// Offsets are token offsets in the record's ids. Turn t spans [its start, its end) (its start is the
// end of turn t − 1, or the first number); its targets are [first target, end), empty for a role
// not trained on. Tokens before the first turn (the template's begin, BOS) and after the last (its
// end, EOS) belong to no turn and are never targets. The role index is the role's place in the
// template's `roles` (OutputSettings.roles names them).

export interface TurnSpan {
  role: number;
  start: number;
  /** First target token; = end for a turn that is not trained on. */
  learn: number;
  end: number;
}

/** Builds a layout from its turns (in order, each starting where the one before ends). */
export function makeLayout(first: number, turns: readonly Omit<TurnSpan, "start">[]): Uint32Array {
  const out = new Uint32Array(1 + 3 * turns.length);
  out[0] = first;
  turns.forEach((t, i) => {
    out[1 + 3 * i] = t.role;
    out[2 + 3 * i] = t.learn;
    out[3 + 3 * i] = t.end;
  });
  return out;
}

export function turnCount(layout: Uint32Array): number {
  return (layout.length - 1) / 3;
}

/** The turns of a layout. */
export function turnSpans(layout: Uint32Array): TurnSpan[] {
  const out: TurnSpan[] = [];
  let start = layout[0];
  for (let i = 1; i + 2 < layout.length; i += 3) {
    out.push({ role: layout[i], start, learn: layout[i + 1], end: layout[i + 2] });
    start = layout[i + 2];
  }
  return out;
}

/** Where a conversation may be cut so that no turn is split: the start of every turn but the first. */
export function turnEdges(layout: Uint32Array): number[] {
  const out: number[] = [];
  for (let i = 1; i + 2 < layout.length - 3; i += 3) out.push(layout[i + 2]);
  return out;
}

/** The turn edges where a turn of a role not trained on begins (a question): the better places to start a piece. */
export function questionEdges(layout: Uint32Array): Set<number> {
  const out = new Set<number>();
  for (const t of turnSpans(layout).slice(1)) if (t.learn === t.end) out.add(t.start);
  return out;
}

/**
 * The longest stretch of the first `length` tokens that cannot be cut at a turn edge: the template's
 * begin with the first turn, a turn, the last turn with the end.
 */
export function longestUncut(layout: Uint32Array, length: number): number {
  let longest = 0;
  let from = 0;
  for (const e of [...turnEdges(layout).filter((x) => x < length), length]) {
    longest = Math.max(longest, e - from);
    from = e;
  }
  return longest;
}

/**
 * Marks with 0 the tokens of document piece [offset, offset + n) that are not targets of the
 * conversation, in `out` from `at` (tokens that are targets keep their value).
 */
export function clearUntrained(layout: Uint32Array, offset: number, n: number, out: Uint8Array, at: number): void {
  let next = offset;
  const end = offset + n;
  for (let i = 1; i + 2 < layout.length && next < end; i += 3) {
    const learn = layout[i + 1];
    const stop = layout[i + 2];
    if (learn <= next) {
      next = Math.max(next, stop);
      continue;
    }
    const upTo = Math.min(learn, end);
    out.fill(0, at + (next - offset), at + (upTo - offset));
    next = Math.max(next, stop);
  }
  if (next < end) out.fill(0, at + (next - offset), at + n);
}

/** The target ranges [start, end) of document piece [offset, offset + n), relative to the piece. */
export function targetRanges(layout: Uint32Array, offset: number, n: number): [number, number][] {
  const out: [number, number][] = [];
  for (let i = 1; i + 2 < layout.length; i += 3) {
    const a = Math.max(layout[i + 1], offset);
    const b = Math.min(layout[i + 2], offset + n);
    if (a < b) out.push([a - offset, b - offset]);
  }
  return out;
}
