// Splitting text into pre-tokens, by a hand-written scanner or by the translated pattern regex.

import type { Scanner } from "./scan-common.js";

export type Pretokenizer = { kind: "scanner"; scan: Scanner; classes: Uint8Array } | { kind: "regex"; regex: RegExp };

/**
 * Calls `piece(start, end)` for each pre-token of `text`, in order. With the regex, text the pattern
 * does not match is skipped, as the reference's match iteration skips it (no known pattern leaves
 * any: each has a catch-all alternative).
 */
export function forEachPiece(text: string, pre: Pretokenizer, piece: (start: number, end: number) => void): void {
  if (pre.kind === "scanner") {
    const { scan, classes } = pre;
    for (let i = 0; i < text.length; ) {
      const e = scan(text, i, classes);
      piece(i, e);
      i = e;
    }
    return;
  }
  const re = pre.regex;
  re.lastIndex = 0;
  for (let m = re.exec(text); m !== null; m = re.exec(text)) {
    if (m[0].length === 0) {
      re.lastIndex++; // an empty match yields no pre-token; step past it as the reference does
      continue;
    }
    piece(m.index, m.index + m[0].length);
  }
}

/** The pre-tokens of `text` as strings. */
export function splitPieces(text: string, pre: Pretokenizer): string[] {
  const out: string[] = [];
  forEachPiece(text, pre, (s, e) => out.push(text.slice(s, e)));
  return out;
}
