// Finding held-out keys among train's sorted keys by one merge, against a Set.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { HI, LO, mergeFind } from "../../src/analysis/distinct-keys.js";

const pairs = (keys: [number, number][]) => {
  const w = new Uint32Array(2 * keys.length);
  keys.forEach(([hi, lo], i) => ((w[2 * i + HI] = hi), (w[2 * i + LO] = lo)));
  return w;
};
const sortKeys = (w: Uint32Array) => (new BigUint64Array(w.buffer).sort(), w);

describe("mergeFind", () => {
  it("reports exactly the wanted keys present among the first n sorted keys, repeats or not", () => {
    const half = fc.oneof(fc.integer({ min: 0, max: 3 }), fc.constantFrom(0x7fffffff, 0x80000000, 0xffffffff));
    const key = fc.tuple(half, half);
    fc.assert(
      fc.property(fc.array(key, { maxLength: 60 }), fc.uniqueArray(key, { maxLength: 30, selector: (k) => `${k[0]}:${k[1]}` }), fc.nat(60), (train, wanted, cut) => {
        const t = sortKeys(pairs(train));
        const n = Math.min(cut, train.length);
        const w = sortKeys(pairs(wanted));
        const present = new Set<string>();
        for (let i = 0; i < n; i++) present.add(`${t[2 * i + HI]}:${t[2 * i + LO]}`);
        const got: string[] = [];
        mergeFind(t, n, w, (j) => got.push(`${w[2 * j + HI]}:${w[2 * j + LO]}`));
        const want: string[] = [];
        for (let j = 0; j < w.length / 2; j++) if (present.has(`${w[2 * j + HI]}:${w[2 * j + LO]}`)) want.push(`${w[2 * j + HI]}:${w[2 * j + LO]}`);
        expect(got).toEqual(want);
      }),
      { numRuns: 1000 },
    );
  });
});
