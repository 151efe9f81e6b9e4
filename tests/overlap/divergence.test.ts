// Entropy, Jensen–Shannon divergence and add-one cross-entropy: by hand, by definition, and against NumPy.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { crossEntropyAddOneBits, entropyBits, jensenShannonBits, UnigramCounts } from "../../src/overlap/divergence.js";
import { python } from "../e2e/cli.js";

const js = (a: number[], b: number[]) => jensenShannonBits(a, sum(a), b, sum(b));
const sum = (a: number[]) => a.reduce((x, y) => x + y, 0);

describe("Jensen–Shannon divergence", () => {
  it("is 1 bit for disjoint supports, 0 for equal distributions, symmetric", () => {
    expect(js([1, 0], [0, 1])).toBe(1);
    expect(js([2, 6, 0], [1, 3, 0])).toBeCloseTo(0, 15);
    expect(js([5, 1, 2], [1, 1, 7])).toBeCloseTo(js([1, 1, 7], [5, 1, 2]), 15);
  });

  it("matches a hand computation: P = (1/2, 1/2, 0), Q = (0, 1/2, 1/2)", () => {
    // M = (1/4, 1/2, 1/4). D(P‖M) = ½·log₂ 2 + ½·log₂ 1 = ½ and D(Q‖M) = ½ likewise, so JSD = ½·½ + ½·½ = ½.
    expect(js([1, 1, 0], [0, 1, 1])).toBeCloseTo(0.5, 15);
  });

  it("agrees with NumPy on random count vectors (definition of J. Lin 1991, from memory)", () => {
    const cases = fc.sample(fc.tuple(fc.array(fc.nat(50), { minLength: 6, maxLength: 6 }), fc.array(fc.nat(50), { minLength: 6, maxLength: 6 })), { numRuns: 25, seed: 7 })
      .filter(([a, b]) => sum(a) > 0 && sum(b) > 0);
    // Second opinion: the formula ½ KL(P‖M) + ½ KL(Q‖M) written directly in NumPy, not our code.
    const numpy: number[] = JSON.parse(
      python(
        `import json, sys, numpy as np
out = []
for a, b in json.loads(sys.argv[1]):
    p = np.array(a, float) / sum(a); q = np.array(b, float) / sum(b); m = (p + q) / 2
    kl = lambda x, y: float(np.sum(x[x > 0] * np.log2(x[x > 0] / y[x > 0])))
    out.append(0.5 * kl(p, m) + 0.5 * kl(q, m))
print(json.dumps(out))`,
        [JSON.stringify(cases)],
      ),
    );
    cases.forEach(([a, b], i) => expect(js(a, b)).toBeCloseTo(numpy[i], 12));
  });
});

describe("entropy and add-one cross-entropy", () => {
  it("entropy of (1/2, 1/4, 1/4) is 1.5 bits", () => {
    expect(entropyBits([2, 1, 1], 4)).toBeCloseTo(1.5, 15);
    expect(entropyBits([], 0)).toBe(0);
  });

  it("cross-entropy by hand: train counts (2, 1, 0, 0), V = 4, held-out tokens [1, 2]", () => {
    // Add-one model: p = (3/7, 2/7, 1/7, 1/7). Held-out: −½ (log₂ 2/7 + log₂ 1/7).
    const expected = -0.5 * (Math.log2(2 / 7) + Math.log2(1 / 7));
    expect(crossEntropyAddOneBits([0, 1, 1, 0], 2, [2, 1, 0, 0], 3, 4)).toBeCloseTo(expected, 14);
    // Train itself under its own add-one model costs more than its entropy (smoothing moves mass to unseen ids).
    expect(crossEntropyAddOneBits([2, 1, 0, 0], 3, [2, 1, 0, 0], 3, 4)).toBeGreaterThan(entropyBits([2, 1, 0, 0], 3));
  });

  it("UnigramCounts counts ids and grows for ids beyond the vocabulary", () => {
    const u = new UnigramCounts(2);
    u.add(Uint32Array.from([0, 1, 1, 5]));
    expect(Array.from(u.counts.slice(0, 6))).toEqual([1, 2, 0, 0, 0, 1]);
    expect(u.total).toBe(4);
    expect(u.ids).toBe(6);
  });
});
