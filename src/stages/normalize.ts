// normalize: Unicode form, line endings, trailing spaces, control and zero-width characters, blank-line runs.
import { mapTurnTexts } from "../chat/turns.js";
import { defineStage } from "./stage.js";
import { bool, field, num, obj, str, type Infer } from "../pipeline/schema.js";

export const FORMS = ["NFC", "NFKC", "NFD", "NFKD", "none"] as const;

export const normalizeOptions = obj({
  form: field(str({ oneOf: FORMS }), { default: "NFKC" }),
  newlines: field(bool(), { default: true }),
  trailing_spaces: field(bool(), { default: true }),
  control_chars: field(bool(), { default: true }),
  zero_width: field(bool(), { default: true }),
  max_blank_lines: field(num({ integer: true, min: 0 }), { default: 1 }),
  trim: field(bool(), { default: true }),
});
export type NormalizeOptions = Infer<typeof normalizeOptions>;

// C0/C1 controls except tab and newline (which carry layout), plus DEL.
const CONTROL = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F-\u009F]/g;
// Zero-width and invisible formatting characters that change bytes but not what a reader sees:
// ZWSP, ZWNJ, ZWJ, word joiner, BOM/ZWNBSP, soft hyphen. (ZWJ inside emoji sequences is lost too;
// common practice for training text, where such sequences are rare.)
const ZERO_WIDTH = /[\u200B\u200C\u200D\u2060\uFEFF\u00AD]/g;
const TRAILING = /[ \t\u00A0\u3000]+$/gm;
const OTHER_LINE_END = /[\r\u2028\u2029]/;

/** Space, tab, no-break space, ideographic space: what `trailing_spaces` removes before a line end. */
function isTrailingSpace(c: number): boolean {
  return c === 0x20 || c === 0x09 || c === 0xa0 || c === 0x3000;
}

/**
 * `t` without spaces and tabs (incl. U+00A0, U+3000) before each "\n" and at the end: the same as
 * replacing /[ \t\u00A0\u3000]+$/gm, found line by line from the newlines instead of at every space
 * (a regular expression tries its end-of-line test after each space of the text).
 */
export function stripTrailingSpaces(t: string): string {
  // The expression's line ends include \r, U+2028 and U+2029 (left when `newlines` is off): rare, so it serves them.
  if (OTHER_LINE_END.test(t)) return t.replace(TRAILING, "");
  let out = "";
  let from = 0;
  for (let at = 0; at <= t.length; ) {
    let end = t.indexOf("\n", at);
    if (end < 0) end = t.length;
    let cut = end;
    while (cut > at && isTrailingSpace(t.charCodeAt(cut - 1))) cut--;
    if (cut < end) {
      out += t.slice(from, cut);
      from = end;
    }
    at = end + 1;
  }
  return from === 0 ? t : out + t.slice(from);
}

/** Applies the normalization to one text; exported for tests and library users. */
export function normalizeText(text: string, o: NormalizeOptions): string {
  let t = text;
  if (o.newlines) t = t.replace(/\r\n?|[\u2028\u2029\u0085]/g, "\n");
  if (o.control_chars) t = t.replace(CONTROL, "");
  if (o.zero_width) t = t.replace(ZERO_WIDTH, "");
  if (o.form !== "none") t = t.normalize(o.form);
  if (o.trailing_spaces) t = stripTrailingSpaces(t);
  if (o.newlines) {
    const keep = "\n".repeat(o.max_blank_lines + 1);
    t = t.replace(new RegExp(`\\n{${o.max_blank_lines + 2},}`, "g"), keep);
  }
  if (o.trim) t = t.trim();
  return t;
}

export default defineStage({
  name: "normalize",
  summary: "Unicode normalization and whitespace/control-character clean-up",
  form: { kind: "record" },
  options: normalizeOptions,
  create(o) {
    return async function* normalize(input) {
      for await (const r of input) {
        // A conversation's turns are normalized one by one (trim applies to each turn).
        mapTurnTexts(r, (t) => ({ text: normalizeText(t, o), extra: 0 }));
        yield r;
      }
    };
  },
});
