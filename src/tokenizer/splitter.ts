// Pre-token splitters of tokenizer files: a pattern split (scanner when we have one, else the regex) chained in order.

import { CL100K_PATTERN, GPT2_PATTERN, O200K_PATTERN } from "./encodings.js";
import { compilePattern } from "./pattern.js";
import type { Scanner } from "./scan-common.js";
import { scanCl100k } from "./scan-cl100k.js";
import { scanGpt2 } from "./scan-gpt2.js";
import { scanO200k } from "./scan-o200k.js";
import { classTable } from "./unicode-classes.js";

/** Calls `piece(start, end)` for consecutive pieces covering text[from..to). */
export type Splitter = (text: string, from: number, to: number, piece: (start: number, end: number) => void) => void;

// The hand-written scanners are proven equal to these patterns in tests/tokenizer/pretokenize.test.ts.
const SCANNERS: ReadonlyArray<[string, Scanner]> = [
  [GPT2_PATTERN, scanGpt2],
  [CL100K_PATTERN, scanCl100k],
  [O200K_PATTERN, scanO200k],
];

/**
 * Splits on `pattern` keeping every character: each match is a piece and so is each stretch
 * between matches (the "Isolated" split behaviour of tokenizer files; the known patterns have a
 * catch-all alternative, so they leave no such stretch). Known patterns use their scanner.
 */
export function patternSplitter(pattern: string): Splitter {
  const scanner = SCANNERS.find(([p]) => p === pattern)?.[1];
  if (scanner !== undefined) {
    const classes = classTable();
    return (text, from, to, piece) => {
      // Scanners look ahead to the end of their string, so a sub-range is scanned as its own string.
      const sub = from === 0 && to === text.length ? text : text.slice(from, to);
      for (let i = 0; i < sub.length; ) {
        const e = scanner(sub, i, classes);
        piece(from + i, from + e);
        i = e;
      }
    };
  }
  const re = compilePattern(pattern);
  return (text, from, to, piece) => {
    const sub = from === 0 && to === text.length ? text : text.slice(from, to);
    re.lastIndex = 0;
    let last = 0;
    for (let m = re.exec(sub); m !== null; m = re.exec(sub)) {
      if (m[0].length === 0) {
        re.lastIndex++;
        continue;
      }
      if (m.index > last) piece(from + last, from + m.index);
      piece(from + m.index, from + m.index + m[0].length);
      last = m.index + m[0].length;
    }
    if (last < sub.length) piece(from + last, from + sub.length);
  };
}

/** Applies the splitters in order, each to every piece of the one before. */
export function chainSplitters(splitters: readonly Splitter[]): Splitter {
  if (splitters.length === 0) return (_text, from, to, piece) => (to > from ? piece(from, to) : undefined);
  if (splitters.length === 1) return splitters[0];
  const [first, ...rest] = splitters;
  const tail = chainSplitters(rest);
  return (text, from, to, piece) => first(text, from, to, (s, e) => tail(text, s, e, piece));
}
