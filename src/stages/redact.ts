// redact: replaces e-mail addresses, phone numbers, IP addresses and payment card numbers with typed placeholders.
//
// Pattern-based redaction is incomplete by nature: it misses obfuscated forms ("ops at depot dot
// example"), names, street addresses, numbers written in words and every format not listed
// below, and it can hit look-alikes. It lowers the amount of personal data in a corpus; it does
// not make a corpus free of it. The README says so to users.
import { mapTurnTexts } from "../chat/turns.js";
import { isIPv6 } from "node:net";
import { defineStage } from "./stage.js";
import type { Issue, Path, Schema } from "../pipeline/schema.js";
import { closest } from "../lib/did-you-mean.js";

export const REDACT_KINDS = ["email", "phone", "ip", "card"] as const;
export type RedactKind = (typeof REDACT_KINDS)[number];

export const PLACEHOLDERS: Record<RedactKind, string> = {
  email: "<EMAIL>",
  phone: "<PHONE>",
  ip: "<IP>",
  card: "<CARD>",
};

/**
 * The order the kinds are applied in, whatever the order in the options: e-mail first (its
 * local part may hold digits), then card and IP numbers, whose digit runs the phone pattern
 * would otherwise claim. Placeholders hold no digits or "@", so later kinds never match them.
 */
const ORDER: readonly RedactKind[] = ["email", "card", "ip", "phone"];

/** Letters and digits of any script: a placeholder never touches one (see pad()). */
const WORD_CHAR = /[\p{L}\p{N}]/u;

// --- e-mail ---------------------------------------------------------------------------------
// The common shape of an address (RFC 5322's dot-atom form, ASCII only): a local part of
// letters, digits and . _ % + - (no leading, trailing or doubled dot), "@", one or more domain
// labels (letters, digits, inner hyphens) and a top-level domain of at least two letters.
// Quoted local parts, IP-literal domains and non-ASCII (internationalized) addresses are not
// matched. The look-behind keeps a match from starting inside a longer token.
const EMAIL =
  /(?<![\p{L}\p{N}._%+\-@])[A-Za-z0-9_%+\-]+(?:\.[A-Za-z0-9_%+\-]+)*@(?:[A-Za-z0-9](?:[A-Za-z0-9\-]{0,61}[A-Za-z0-9])?\.)+([A-Za-z]{2,63})(?![\p{L}\p{N}_@\-]|\.[\p{L}\p{N}])/gu;
// Image names such as "icon@2x.png" have the shape of an address; no top-level domain is named
// like an image format, so those endings are not addresses.
const FILE_ENDINGS = new Set(["png", "jpg", "jpeg", "gif", "svg", "webp", "bmp", "tif", "tiff", "ico", "heic"]);

// --- payment cards --------------------------------------------------------------------------
// 13 to 19 digits (ISO/IEC 7812 card numbers), written as one run or in the printed groupings
// 4-4-4-4(-3), 4-4-4-1..4 and 4-6-4/5, with one kind of separator (space or hyphen) throughout.
// Only numbers passing the Luhn check are replaced: a random digit run fails it 9 times in 10.
const CARD =
  /(?<![\p{L}\p{N}_+\-.,\/])(?:\d{13,19}|\d{4}([ \-])\d{4}\1\d{4}\1\d{1,4}(?:\1\d{3})?|\d{4}([ \-])\d{6}\2\d{4,5})(?![\p{L}\p{N}_]|[\-.,\/]\d)/gu;

/** Luhn (mod 10) check digit test, ISO/IEC 7812-1 annex B. */
export function luhnValid(digits: string): boolean {
  let sum = 0;
  for (let i = 0; i < digits.length; i++) {
    let d = digits.charCodeAt(digits.length - 1 - i) - 48;
    if (i % 2 === 1) {
      d *= 2;
      if (d > 9) d -= 9;
    }
    sum += d;
  }
  return digits.length > 0 && sum % 10 === 0;
}

// --- IP addresses ---------------------------------------------------------------------------
// IPv4 dotted quads with every octet 0-255 and no leading zeros; a fifth ".digit" (a version
// string like 1.2.3.4.5) or an adjoining digit rules the match out.
const OCTET = "(?:25[0-5]|2[0-4]\\d|1\\d\\d|[1-9]?\\d)";
const IPV4 = new RegExp(`(?<![\\p{L}\\p{N}_.])${OCTET}(?:\\.${OCTET}){3}(?![\\p{L}\\p{N}_]|\\.\\d)`, "gu");
// IPv6 candidates: hex groups and at least two colons (an embedded dotted quad allowed at the
// end), validated by node:net's parser. Clock times (12:30:45) and MAC addresses fail it; "::"
// and "::1" (unspecified and loopback, not personal) are left alone by requiring two hex groups.
const IPV6 = /(?<![\p{L}\p{N}_:.])(?:[0-9A-Fa-f]{0,4}:){2,7}(?:(?:\d{1,3}\.){3}\d{1,3}|[0-9A-Fa-f]{1,4})?(?![\p{L}\p{N}_:]|\.\d)/gu;

// --- phone numbers --------------------------------------------------------------------------
// Written phone numbers have no one format, so three shapes are recognised (7 to 15 digits, the
// E.164 maximum being 15):
//  - international: "+" and a 1-3 digit country code, then digit groups (optional "(0)" or area
//    code in parentheses), separated by spaces, dots, hyphens or slashes;
//  - national with a trunk prefix "0" (most of Europe), at least 9 digits, e.g. 030 1234 5678,
//    0171-5550123, (030) 1234567;
//  - North American 10-digit numbers, area code and exchange starting 2-9, e.g. 555-234-5678 or
//    (555) 234-5678.
// Bare digit runs without separators and short local numbers are not matched (they cannot be
// told from order numbers, car numbers or counts), nor are dates (2025-03-14, 14.03.2025).
const SEP = "[ .\\-/]";
const PHONE = new RegExp(
  [
    `(?<![\\p{L}\\p{N}_+\\-./@#])`,
    `(?:`,
    `\\+\\d{1,3}(?:${SEP}?\\(\\d{1,4}\\))?(?:${SEP}?\\d{1,5}){1,6}`,
    `|\\(0\\d{1,5}\\)${SEP}?\\d{2,8}(?:${SEP}\\d{2,8}){0,3}`,
    `|0\\d{1,5}(?:${SEP}\\d{2,8}){1,4}`,
    `|\\([2-9]\\d{2}\\)${SEP}?[2-9]\\d{2}[ .\\-]\\d{4}`,
    `|[2-9]\\d{2}([ .\\-])[2-9]\\d{2}\\1\\d{4}`,
    `)`,
    `(?![\\p{L}\\p{N}_]|[\\-./]\\d)`,
  ].join(""),
  "gu",
);
const DATE = /^(?:\d{4}[\-./]\d{1,2}[\-./]\d{1,2}|\d{1,2}[\-./]\d{1,2}[\-./]\d{2,4})$/;

function digitCount(s: string): number {
  let n = 0;
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c >= 48 && c <= 57) n++;
  }
  return n;
}

function phoneOk(m: string): boolean {
  if (DATE.test(m)) return false;
  const digits = digitCount(m);
  if (digits > 15) return false;
  if (m.startsWith("+")) return digits >= 8;
  if (m.startsWith("0") || m.startsWith("(0")) return digits >= 9;
  return digits === 10;
}

interface Pattern {
  regex: RegExp;
  /** How many characters of the candidate, from its start, to replace: its length, or 0 to leave it. */
  take(match: string, groups: string[]): number;
}

const all = (ok: boolean, m: string) => (ok ? m.length : 0);

/** A valid IPv6 address with at least two hex groups; a sentence's colon after it ("…::1: timeout") is left outside. */
function ipv6Length(m: string): number {
  const ok = (a: string) => isIPv6(a) && (a.match(/[0-9A-Fa-f]+/g)?.length ?? 0) >= 2;
  if (ok(m)) return m.length;
  if (m.endsWith(":") && !m.endsWith("::") && ok(m.slice(0, -1))) return m.length - 1;
  return 0;
}

const PATTERNS: Record<RedactKind, Pattern[]> = {
  email: [{ regex: EMAIL, take: (m, g) => all(!FILE_ENDINGS.has(g[0].toLowerCase()), m) }],
  card: [
    {
      regex: CARD,
      take: (m) => {
        const digits = m.replace(/[ \-]/g, "");
        return all(digits.length >= 13 && digits.length <= 19 && luhnValid(digits), m);
      },
    },
  ],
  // IPv6 first: an IPv4-mapped address (::ffff:192.0.2.1) is then replaced whole.
  ip: [
    { regex: IPV6, take: ipv6Length },
    { regex: IPV4, take: (m) => m.length },
  ],
  phone: [{ regex: PHONE, take: (m) => all(phoneOk(m), m) }],
};

/** Whether the code point just before `i`, or the one at `i`, is a letter or digit (surrogate pairs read whole). */
function wordCharBefore(text: string, i: number): boolean {
  if (i <= 0) return false;
  const lo = text.charCodeAt(i - 1);
  const start = lo >= 0xdc00 && lo <= 0xdfff && i >= 2 ? i - 2 : i - 1;
  return WORD_CHAR.test(String.fromCodePoint(text.codePointAt(start)!));
}
function wordCharAt(text: string, i: number): boolean {
  return i < text.length && WORD_CHAR.test(String.fromCodePoint(text.codePointAt(i)!));
}

/** The placeholder, with a space on a side where it would otherwise touch a letter or digit. */
function pad(placeholder: string, text: string, start: number, end: number): string {
  return (wordCharBefore(text, start) ? " " : "") + placeholder + (wordCharAt(text, end) ? " " : "");
}

/** Replaces every match of the given kinds; returns the new text and the number of replacements per kind. */
export function redactText(text: string, kinds: readonly RedactKind[]): { text: string; counts: Record<RedactKind, number> } {
  const counts = { email: 0, phone: 0, ip: 0, card: 0 };
  let out = text;
  for (const kind of ORDER) {
    if (!kinds.includes(kind)) continue;
    for (const { regex, take } of PATTERNS[kind]) {
      out = out.replace(regex, (...args: unknown[]) => {
        // replace() passes: match, capture groups…, offset, whole string (no named groups here).
        const match = args[0] as string;
        const whole = args[args.length - 1] as string;
        const offset = args[args.length - 2] as number;
        const n = take(match, args.slice(1, -2) as string[]);
        if (n === 0) return match;
        counts[kind]++;
        return pad(PLACEHOLDERS[kind], whole, offset, offset + n) + match.slice(n);
      });
    }
  }
  return { text: out, counts };
}

/** Resolved options: the kinds to replace. */
export interface RedactOptions {
  kinds: RedactKind[];
}

/**
 * The option: a list of kinds (`redact: [email, phone]`), a single kind (`redact: email`),
 * nothing (`- redact`) for all four, or the resolved form `{ kinds: [...] }` (what `plan`
 * prints). Duplicates are merged.
 */
export const redactOptions: Schema<RedactOptions> = {
  describe: `a list of ${REDACT_KINDS.join(" | ")}`,
  check(value: unknown, path: Path, issues: Issue[]): RedactOptions {
    let at = path;
    if (value !== null && typeof value === "object" && !Array.isArray(value)) {
      const keys = Object.keys(value);
      if (keys.length === 0) return { kinds: [...REDACT_KINDS] };
      for (const k of keys) {
        if (k !== "kinds") issues.push({ path: [...path, k], atKey: true, message: `unknown key "${k}"; allowed: kinds (or give the list of kinds directly)` });
      }
      value = (value as Record<string, unknown>).kinds;
      at = [...path, "kinds"];
    }
    if (value === null || value === undefined) return { kinds: [...REDACT_KINDS] };
    const items = Array.isArray(value) ? value : [value];
    if (items.length === 0) issues.push({ path: at, message: `expected a non-empty list of ${REDACT_KINDS.join(" | ")}` });
    const kinds: RedactKind[] = [];
    items.forEach((item, i) => {
      const where = Array.isArray(value) ? [...at, i] : at;
      if (typeof item !== "string" || !(REDACT_KINDS as readonly string[]).includes(item)) {
        const near = typeof item === "string" ? closest(item, REDACT_KINDS) : undefined;
        issues.push({ path: where, message: `expected one of ${REDACT_KINDS.join(" | ")}, got ${JSON.stringify(item)}${near ? ` (did you mean "${near}"?)` : ""}` });
      } else if (!kinds.includes(item as RedactKind)) kinds.push(item as RedactKind);
    });
    return { kinds };
  },
};

export default defineStage({
  name: "redact",
  summary: "replaces e-mail addresses, phone numbers, IP addresses and Luhn-valid card numbers with <EMAIL>, <PHONE>, <IP>, <CARD>",
  form: { kind: "record" },
  options: redactOptions,
  create({ kinds }: RedactOptions) {
    return async function* redact(input, ctx) {
      for await (const r of input) {
        // Per turn for a conversation, so a match never spans two turns and the turn edges stay exact.
        for (const counts of mapTurnTexts(r, (t) => {
          const { text, counts } = redactText(t, kinds);
          return { text, extra: counts };
        }))
          for (const kind of kinds) if (counts[kind] > 0) ctx.count(`redact:${kind}`, counts[kind]);
        yield r;
      }
      // Every requested kind appears in stage_counts, 0 included, so a clean corpus is visibly checked.
      for (const kind of kinds) ctx.count(`redact:${kind}`, 0);
    };
  },
});
