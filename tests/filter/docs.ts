// Builders for hand-made test documents of exact sizes (tram-depot vocabulary, invented).
import { DocView } from "../../src/filter/units.js";
import type { Rule } from "../../src/filter/rule.js";

/** n distinct lower-case words of exactly five letters ("qaaaa", "qaaab", …), so shares come out exact. */
export function distinctWords(n: number, prefix = "q"): string[] {
  const out: string[] = [];
  for (let i = 0; i < n; i++) {
    let s = "";
    let x = i;
    for (let k = 0; k < 4; k++) {
      s = String.fromCharCode(97 + (x % 26)) + s;
      x = Math.floor(x / 26);
    }
    out.push(prefix + s);
  }
  return out;
}

/** The rule's verdict on `text` with its default thresholds (or `o`): undefined = passes. */
export function verdict<O extends object>(rule: Rule<O>, text: string, o: O = rule.defaults) {
  return rule.check(new DocView(text), o);
}
