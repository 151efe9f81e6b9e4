// The byte <-> character map of tokenizer files: a bijection with the known fixed points.
import { describe, expect, it } from "vitest";
import { BYTE_TO_CHAR, bytesToToken, tokenToBytes } from "../../src/tokenizer/index.js";

describe("byte-level map", () => {
  it("maps the 256 bytes to 256 distinct single characters, printable ASCII to itself", () => {
    expect(new Set(BYTE_TO_CHAR).size).toBe(256);
    expect(BYTE_TO_CHAR.every((c) => c.length === 1)).toBe(true);
    for (let b = 0x21; b <= 0x7e; b++) expect(BYTE_TO_CHAR[b]).toBe(String.fromCharCode(b));
  });

  it('shows space as "Ġ" and newline as "Ċ", as in published GPT-2 vocabularies (from memory: "Ġthe", "ĊĊ")', () => {
    expect(bytesToToken(Buffer.from(" the\n\n"))).toBe("ĠtheĊĊ");
    expect(BYTE_TO_CHAR[0x00]).toBe("Ā");
    expect(BYTE_TO_CHAR[0xad]).toBe("\u0143"); // soft hyphen, the 68th and last unprintable byte: U+0100 + 67
  });

  it("round-trips every byte and refuses characters outside the map", () => {
    const all = Uint8Array.from({ length: 256 }, (_, b) => b);
    expect(Array.from(tokenToBytes(bytesToToken(all)) as Uint8Array)).toEqual(Array.from(all));
    expect(tokenToBytes("a▁b")).toBeUndefined();
  });
});
