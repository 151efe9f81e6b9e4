// Strict UTF-8 helpers, checked against the platform's fatal TextDecoder.

import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { Utf8Pieces, decodeStrict, firstInvalidUtf8, withoutBom, type Utf8Piece } from "../../src/sources/utf8.js";

const fatal = new TextDecoder("utf-8", { fatal: true, ignoreBOM: true });
const isValid = (b: Uint8Array) => {
  try {
    fatal.decode(b);
    return true;
  } catch {
    return false;
  }
};

// Bytes biased towards UTF-8 structure (lead bytes, continuation bytes, edge values) rather than uniform noise.
const utf8ish = fc.array(
  fc.oneof(
    fc.integer({ min: 0, max: 0x7f }),
    fc.integer({ min: 0x80, max: 0xbf }),
    fc.constantFrom(0xc0, 0xc1, 0xc2, 0xdf, 0xe0, 0xed, 0xef, 0xf0, 0xf4, 0xf5, 0xff, 0xa0, 0x9f, 0x90, 0x8f),
  ),
  { maxLength: 40 },
);
const textBytes = fc.string({ unit: "grapheme", maxLength: 30 }).map((s) => Array.from(Buffer.from(s)));
const mixed = fc.array(fc.oneof(utf8ish, textBytes), { maxLength: 4 }).map((parts) => Uint8Array.from(parts.flat()));

/** Splits `b` at the given cut points (sorted, deduplicated). */
function split(b: Uint8Array, cuts: number[]): Uint8Array[] {
  const points = [...new Set(cuts.map((c) => c % (b.length + 1)))].sort((x, y) => x - y);
  const out: Uint8Array[] = [];
  let start = 0;
  for (const p of points) {
    out.push(b.subarray(start, p));
    start = p;
  }
  out.push(b.subarray(start));
  return out;
}

/** Joins adjacent text pieces so outputs from different chunkings can be compared. */
function normalize(pieces: Utf8Piece[]): Utf8Piece[] {
  const out: Utf8Piece[] = [];
  for (const p of pieces) {
    const last = out[out.length - 1];
    if (typeof p === "string" && typeof last === "string") out[out.length - 1] = last + p;
    else out.push(p);
  }
  return out;
}

describe("firstInvalidUtf8 / decodeStrict", () => {
  it("agree with a fatal TextDecoder on arbitrary bytes", () => {
    fc.assert(
      fc.property(mixed, (b) => {
        const valid = isValid(b);
        expect(firstInvalidUtf8(b) === -1).toBe(valid);
        expect(decodeStrict(b) === undefined).toBe(!valid);
        if (valid) return;
        // The prefix before the reported byte is valid, and nothing shorter than it hides an error.
        expect(isValid(b.subarray(0, firstInvalidUtf8(b)))).toBe(true);
      }),
      { numRuns: 2000 },
    );
  });

  it("names the offending byte in known cases", () => {
    expect(firstInvalidUtf8(Buffer.from([0x61, 0xc0, 0xaf]))).toBe(1); // overlong "/"
    expect(firstInvalidUtf8(Buffer.from([0xed, 0xa0, 0x80]))).toBe(0); // surrogate
    expect(firstInvalidUtf8(Buffer.from([0xf4, 0x90, 0x80, 0x80]))).toBe(0); // above U+10FFFF
    expect(firstInvalidUtf8(Buffer.from([0x61, 0x62, 0xe2, 0x82]))).toBe(2); // truncated at the end
    expect(firstInvalidUtf8(Buffer.from("Gleis 3 \u2192 Depot \u{1f68b}"))).toBe(-1);
  });

  it("keeps a U+FEFF inside the data", () => {
    expect(decodeStrict(Buffer.from("\ufeffa"))).toBe("\ufeffa");
  });
});

describe("Utf8Pieces", () => {
  it("gives the same pieces whatever the chunking, and the right text when valid", () => {
    fc.assert(
      fc.property(mixed, fc.array(fc.nat(), { maxLength: 6 }), (b, cuts) => {
        const whole = new Utf8Pieces();
        const expected = normalize([...whole.push(b), ...whole.end()]);
        const chunked = new Utf8Pieces();
        const got: Utf8Piece[] = [];
        for (const part of split(b, cuts)) got.push(...chunked.push(part));
        got.push(...chunked.end());
        expect(normalize(got)).toEqual(expected);
        if (isValid(b)) expect(expected).toEqual(b.length ? [Buffer.from(b).toString("utf8")] : []);
        else expect(expected).toContainEqual({ invalidAt: firstInvalidUtf8(b) });
      }),
      { numRuns: 2000 },
    );
  });

  it("reports each invalid byte at its absolute offset and keeps the text around it", () => {
    const p = new Utf8Pieces();
    const out = [...p.push(Buffer.from([0x61, 0xff, 0x62, 0xe2])), ...p.push(Buffer.from([0x82, 0xac, 0xfe])), ...p.end()];
    expect(normalize(out)).toEqual(["a", { invalidAt: 1 }, "b\u20ac", { invalidAt: 6 }]);
  });
});

describe("withoutBom", () => {
  async function run(chunks: number[][]): Promise<number[]> {
    async function* source() {
      for (const c of chunks) yield Buffer.from(c);
    }
    const out: number[] = [];
    for await (const c of withoutBom(source())) out.push(...c);
    return out;
  }

  it("drops a BOM even when it spans chunks, and only at the start", async () => {
    expect(await run([[0xef], [0xbb], [0xbf, 0x61], [0xef, 0xbb, 0xbf]])).toEqual([0x61, 0xef, 0xbb, 0xbf]);
    expect(await run([[0xef, 0xbb, 0xbf]])).toEqual([]);
  });

  it("keeps bytes that only look like the start of a BOM", async () => {
    expect(await run([[0xef, 0xbb]])).toEqual([0xef, 0xbb]);
    expect(await run([[0xef], [0x61]])).toEqual([0xef, 0x61]);
    expect(await run([[], [0x61]])).toEqual([0x61]);
  });
});
