// Distinct 64-bit keys counted in memory or through spill files agree with a Set, and the spills are removed.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { mkdtempSync, readdirSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { DistinctKeys, HI, LO } from "../../src/analysis/distinct-keys.js";

describe("DistinctKeys", () => {
  // Keys from a small pool (many repeats), some equal in one half only, added in chunks of any size.
  const pool = fc.array(fc.tuple(fc.constantFrom(0, 1, 0xffffffff, 0x80000000), fc.nat({ max: 0xffffffff })), { minLength: 1, maxLength: 30 });

  it("counts what a Set counts, whatever the budget", () => {
    fc.assert(
      fc.property(pool, fc.array(fc.tuple(fc.nat(), fc.nat()), { maxLength: 300 }), fc.array(fc.integer({ min: 1, max: 50 }), { minLength: 1 }), fc.constantFrom(1, 3, 10, 1 << 20), (keys, picks, chunkSizes, budget) => {
        const chosen = picks.map(([i, swap]) => (swap % 5 === 0 ? [keys[i % keys.length][1], keys[i % keys.length][0]] : keys[i % keys.length]));
        const dir = mkdtempSync(join(tmpdir(), "siftpack-distinct-"));
        const d = new DistinctKeys(chosen.length, dir, budget);
        for (let at = 0, c = 0; at < chosen.length; c++) {
          const n = Math.min(chunkSizes[c % chunkSizes.length], chosen.length - at);
          const w = new Uint32Array(2 * n);
          for (let i = 0; i < n; i++) {
            w[2 * i + HI] = chosen[at + i][0];
            w[2 * i + LO] = chosen[at + i][1];
          }
          d.add(w);
          at += n;
        }
        expect(d.count()).toBe(new Set(chosen.map(([hi, lo]) => `${hi}:${lo}`)).size);
        expect(readdirSync(dir)).toEqual([]);
      }),
      { numRuns: 200 },
    );
  });
});
