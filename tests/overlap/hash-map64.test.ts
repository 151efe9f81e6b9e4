// The typed-array hash table agrees with a Map on random operations, through several growths.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { HashMap64 } from "../../src/overlap/hash-map64.js";

describe("HashMap64", () => {
  it("stores, finds and keeps the first value like a Map keyed by the pair", () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(fc.oneof(fc.integer({ min: 0, max: 50 }), fc.constantFrom(0x7fffffff, 0x80000000, 0xffffffff)), fc.nat(0xffffffff), fc.integer({ min: 0, max: 1000 })), { maxLength: 400 }), (ops) => {
        const m = new HashMap64(4);
        const ref = new Map<string, number>();
        for (const [hi, lo, v] of ops) {
          // Few distinct hi values and colliding low bits force probing.
          const lo2 = lo & 0xff;
          const k = `${hi}:${lo2}`;
          if (!ref.has(k)) ref.set(k, v);
          expect(m.setIfAbsent(hi, lo2, v)).toBe(ref.get(k));
        }
        expect(m.size).toBe(ref.size);
        for (const [k, v] of ref) {
          const [hi, lo] = k.split(":").map(Number);
          expect(m.get(hi, lo)).toBe(v);
          expect(m.has(hi, lo)).toBe(true);
        }
        expect(m.get(999, 0)).toBe(-1);
        let n = 0;
        m.forEach((hi, lo, v) => {
          n++;
          expect(ref.get(`${hi}:${lo}`)).toBe(v);
        });
        expect(n).toBe(ref.size);
      }),
    );
  });

  it("holds nothing after clear, and fills again as a new table would", () => {
    const m = new HashMap64(4);
    for (let i = 0; i < 100; i++) m.setIfAbsent(i, i * 7, i);
    m.clear();
    expect(m.size).toBe(0);
    expect(m.get(3, 21)).toBe(-1);
    let n = 0;
    m.forEach(() => n++);
    expect(n).toBe(0);
    expect(m.setIfAbsent(3, 21, 40)).toBe(40);
    expect(m.setIfAbsent(3, 21, 41)).toBe(40);
    expect(m.size).toBe(1);
  });

  it("treats keys as unsigned: -1 and 0xffffffff are the same half", () => {
    const m = new HashMap64();
    m.setIfAbsent(-1, -2, 5);
    expect(m.get(0xffffffff, 0xfffffffe)).toBe(5);
  });
});
