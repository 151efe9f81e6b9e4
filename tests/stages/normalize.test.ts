// normalize: the Unicode forms checked against the Unicode Consortium's conformance file, plus the clean-up rules.
import { describe, expect, it } from "vitest";
import { execFileSync } from "node:child_process";
import { normalizeText, normalizeOptions, stripTrailingSpaces, type NormalizeOptions } from "../../src/stages/normalize.js";
import fc from "fast-check";

const defaults = (o: Partial<NormalizeOptions> = {}): NormalizeOptions => ({ ...normalizeOptions.check({}, [], []), ...o });
const formOnly = (form: NormalizeOptions["form"]) =>
  defaults({ form, newlines: false, trailing_spaces: false, control_chars: false, zero_width: false, trim: false });

// Source: Unicode Standard Annex #15, NormalizationTest.txt (Debian package unicode-data,
// /usr/share/unicode/NormalizationTest.txt.bz2). Each line: c1;c2;c3;c4;c5 with
// NFC(c1..c3) = c2, NFC(c4..c5) = c4, NFD(c1..c3) = c3, NFD(c4..c5) = c5, NFKC(all) = c4, NFKD(all) = c5.
const CONFORMANCE = "/usr/share/unicode/NormalizationTest.txt.bz2";

function conformanceLines(): string[][] {
  const text = execFileSync("bzcat", [CONFORMANCE], { encoding: "utf8", maxBuffer: 64 << 20 });
  const rows: string[][] = [];
  for (const line of text.split("\n")) {
    if (!line || line.startsWith("#") || line.startsWith("@")) continue;
    const cols = line.split(";").slice(0, 5);
    rows.push(cols.map((c) => String.fromCodePoint(...c.trim().split(" ").map((h) => parseInt(h, 16)))));
  }
  return rows;
}

describe("normalize: Unicode conformance (UAX #15 NormalizationTest.txt)", () => {
  const rows = conformanceLines();
  it("has the conformance data", () => expect(rows.length).toBeGreaterThan(18000));
  for (const form of ["NFC", "NFD", "NFKC", "NFKD"] as const) {
    it(`${form} passes every conformance line`, () => {
      const o = formOnly(form);
      const failures: string[] = [];
      for (const [c1, c2, c3, c4, c5] of rows) {
        const want = { NFC: [c2, c2, c2, c4, c4], NFD: [c3, c3, c3, c5, c5], NFKC: [c4, c4, c4, c4, c4], NFKD: [c5, c5, c5, c5, c5] }[form];
        [c1, c2, c3, c4, c5].forEach((src, i) => {
          if (normalizeText(src, o) !== want[i]) failures.push(`${form}(c${i + 1} of ${JSON.stringify(c1)})`);
        });
      }
      expect(failures.slice(0, 5)).toEqual([]);
    });
  }
});

describe("normalize: clean-up", () => {
  const o = defaults();
  it("unifies line endings, strips trailing spaces, collapses blank-line runs, trims", () => {
    expect(normalizeText("  Pantograph check\r\nok  \r\n\r\n\r\n\rnext\u2028line \t\n", o)).toBe("Pantograph check\nok\n\nnext\nline");
  });
  it("removes control and zero-width characters but keeps tabs and newlines", () => {
    expect(normalizeText("bell\u0007 and\u200b zero\u200dwidth\ufeff\tkept\nline\u0000", o)).toBe("bell and zerowidth\tkept\nline");
  });
  it("applies NFKC by default: fullwidth digits, ligatures, no-break space", () => {
    expect(normalizeText("car \uff11\uff14, \ufb01lter\u00a0ok", o)).toBe("car 14, filter ok");
  });
  it("keeps up to max_blank_lines blank lines", () => {
    expect(normalizeText("a\n\n\n\n\nb", defaults({ max_blank_lines: 2 }))).toBe("a\n\n\nb");
    expect(normalizeText("a\n\n\nb", defaults({ max_blank_lines: 0 }))).toBe("a\nb");
  });
  it("is idempotent", () => {
    const s = "  x\r\n\u00a0\uff21\u0301  \n\n\n\ny\u200b ";
    expect(normalizeText(normalizeText(s, o), o)).toBe(normalizeText(s, o));
  });
});

describe("normalize: trailing spaces", () => {
  it("stripTrailingSpaces equals the regular expression /[ \\t\\u00A0\\u3000]+$/gm on any text", () => {
    const piece = fc.constantFrom(" ", "\t", "\u00A0", "\u3000", "\n", "\r", "\r\n", "\u2028", "\u2029", "\u0085", "tram", "é", "x y");
    fc.assert(
      fc.property(fc.array(fc.oneof(piece, fc.string()), { maxLength: 30 }), (parts) => {
        const t = parts.join("");
        expect(stripTrailingSpaces(t)).toBe(t.replace(/[ \t\u00A0\u3000]+$/gm, ""));
      }),
      { numRuns: 3000 },
    );
  });
});
