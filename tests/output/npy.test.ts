// .npy headers: NEP 1 layout (magic, version, 64-byte-aligned header) and a round trip through our parser.
import { describe, expect, it } from "vitest";
import { encodeValues, npyHeader, parseNpyHeader } from "../../src/output/npy.js";

describe("npy header", () => {
  it("follows format 1.0 (NEP 1): magic, version, little-endian length, aligned, newline-terminated", () => {
    const h = npyHeader("uint16", [3, 1024]);
    expect([...h.subarray(0, 8)]).toEqual([0x93, 78, 85, 77, 80, 89, 1, 0]);
    expect(h.length % 64).toBe(0);
    const len = h[8] | (h[9] << 8);
    expect(10 + len).toBe(h.length);
    const dict = Buffer.from(h.subarray(10)).toString("latin1");
    expect(dict.endsWith("\n")).toBe(true);
    expect(dict.trim()).toBe("{'descr': '<u2', 'fortran_order': False, 'shape': (3, 1024), }");
  });

  it("writes 1-D shapes with a trailing comma, as Python tuples need", () => {
    const dict = Buffer.from(npyHeader("int32", [5]).subarray(10)).toString("latin1");
    expect(dict).toContain("'shape': (5,)");
  });

  it("round-trips through the parser", () => {
    for (const dtype of ["uint8", "uint16", "uint32", "int32", "int64"] as const) {
      const info = parseNpyHeader(npyHeader(dtype, [7, 9]));
      expect(info).toMatchObject({ dtype, shape: [7, 9] });
    }
  });

  it("encodes values little-endian at the dtype's width", () => {
    expect([...encodeValues(Uint32Array.from([1, 258]), "uint16")]).toEqual([1, 0, 2, 1]);
    expect([...encodeValues(Uint32Array.from([1]), "int64")]).toEqual([1, 0, 0, 0, 0, 0, 0, 0]);
  });
});
