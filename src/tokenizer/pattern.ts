// Translates an encoding's pre-tokenizer pattern (reference regex syntax) into an equivalent JavaScript RegExp.
//
// Why translate instead of `new RegExp(pat, "u")`: JavaScript's \s differs from the reference's
// (U+FEFF in, U+0085 out), JavaScript has no (?i:...) groups (Node 20), and \p{...} would follow the
// host's ICU version. Here every class is spelled out from our pinned Unicode 16.0 table.

import { SiftpackError } from "../errors.js";
import { LL, LM, LO, LT, LU, MARK, NUM, WS, rangesOf } from "./unicode-classes.js";

const PROPERTY_CLASSES: Record<string, readonly number[]> = {
  L: [LU, LT, LL, LM, LO],
  Lu: [LU],
  Lt: [LT],
  Ll: [LL],
  Lm: [LM],
  Lo: [LO],
  M: [MARK],
  N: [NUM],
};

/** Case-insensitive partners of ASCII letters beyond their other ASCII case (Unicode simple case folding). */
const EXTRA_FOLDS: Record<string, string> = { s: "\u017f", k: "\u212a" };

/** The RegExp (flags "gu") that splits text exactly as `pat` does in the reference. */
export function compilePattern(pat: string): RegExp {
  return new RegExp(translate(pat), "gu");
}

/** The JavaScript source for `pat`; exported for tests. */
export function translate(pat: string): string {
  let out = "";
  let inClass = false;
  let i = 0;
  while (i < pat.length) {
    const c = pat[i];
    if (c === "\\") {
      const e = pat[i + 1];
      if (e === "p") {
        const close = pat.indexOf("}", i);
        if (pat[i + 2] !== "{" || close < 0) throw patternError(`malformed \\p at ${i}`);
        const name = pat.slice(i + 3, close);
        const classes = PROPERTY_CLASSES[name];
        if (classes === undefined) throw patternError(`unsupported property \\p{${name}}`);
        out += classBody(classes, inClass);
        i = close + 1;
      } else if (e === "s") {
        out += classBody([WS], inClass);
        i += 2;
      } else if (e === "S") {
        if (inClass) throw patternError("\\S inside a character class is not supported");
        out += "[^" + rangeText([WS]) + "]";
        i += 2;
      } else if (e === undefined) {
        throw patternError("pattern ends with a backslash");
      } else {
        out += c + e;
        i += 2;
      }
    } else if (inClass) {
      if (c === "]") inClass = false;
      out += c;
      i++;
    } else if (c === "[") {
      inClass = true;
      out += c;
      if (pat[i + 1] === "^") {
        out += "^";
        i++;
      }
      i++;
    } else if (pat.startsWith("(?i:", i)) {
      const close = pat.indexOf(")", i);
      if (close < 0) throw patternError(`unclosed (?i: at ${i}`);
      out += "(?:" + caseInsensitive(pat.slice(i + 4, close)) + ")";
      i = close + 1;
    } else {
      out += c;
      i++;
    }
  }
  if (inClass) throw patternError("unclosed character class");
  return out;
}

function classBody(classes: readonly number[], inClass: boolean): string {
  const body = rangeText(classes);
  return inClass ? body : "[" + body + "]";
}

function rangeText(classes: readonly number[]): string {
  let s = "";
  for (const [a, b] of rangesOf(classes)) {
    s += a === b ? hex(a) : hex(a) + "-" + hex(b);
  }
  return s;
}

function hex(cp: number): string {
  return "\\u{" + cp.toString(16) + "}";
}

/** Spells out a (?i:...) body; only literal letters, apostrophes and alternation are supported. */
function caseInsensitive(body: string): string {
  let out = "";
  for (const ch of body) {
    if (ch === "|") {
      out += "|";
    } else if (/^[A-Za-z]$/.test(ch)) {
      const lower = ch.toLowerCase();
      out += "[" + lower + lower.toUpperCase() + (EXTRA_FOLDS[lower] ?? "") + "]";
    } else if (ch === "'") {
      out += "'";
    } else {
      throw patternError(`unsupported character ${JSON.stringify(ch)} inside (?i:...)`);
    }
  }
  return out;
}

function patternError(message: string): SiftpackError {
  return new SiftpackError("SP_TOKENIZER", `cannot translate the pre-tokenizer pattern: ${message}`);
}
