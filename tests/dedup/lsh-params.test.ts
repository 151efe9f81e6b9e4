// LSH banding: the choice of bands × rows, what plan shows, and measured candidate rates against 1 − (1 − s^r)^b.
import { describe, expect, it } from "vitest";
import { bandThreshold, candidateProbability, chooseBands, explainBands, resolveBands } from "../../src/dedup/lsh-params.js";
import { BatchSigner } from "../../src/dedup/signer.js";
import { MinhashSigner } from "../../src/dedup/signature.js";
import { xxh32, xxh32Lanes, deriveSeed } from "../../src/dedup/xxh32.js";

const defaults = { threshold: 0.8, permutations: 128, miss_weight: 0.9 };

describe("choosing bands × rows", () => {
  it("under equal weights still meets the recall floor, which the balanced optimum 9 × 13 misses", () => {
    // 9 × 13 is the balanced optimum at 0.8 and k = 128 (recomputed below); its own threshold is ≈ 0.84
    // and it finds a pair at s = 0.8 only 40 % of the time, at s = 0.85 only 69 %.
    expect(bandThreshold(9, 13)).toBeCloseTo(0.8445, 3);
    expect(candidateProbability(0.8, 9, 13)).toBeCloseTo(0.399, 3);
    expect(candidateProbability(0.85, 9, 13)).toBeLessThan(0.95);
    const c = chooseBands(0.8, 128, 0.5);
    expect(candidateProbability(0.85, c.bands, c.rows)).toBeGreaterThanOrEqual(0.95);
  });

  it("by default makes a pair at s = threshold + 0.05 a candidate with probability ≥ 0.95", () => {
    for (const threshold of [0.5, 0.6, 0.7, 0.75, 0.8, 0.85, 0.9, 0.95]) {
      for (const permutations of [64, 128, 256]) {
        const { bands, rows } = resolveBands({ ...defaults, threshold, permutations });
        expect(bands * rows).toBeLessThanOrEqual(permutations);
        expect(candidateProbability(Math.min(1, threshold + 0.05), bands, rows)).toBeGreaterThanOrEqual(0.95);
      }
    }
  });

  it("chooses 14 × 9 for the defaults (threshold 0.8, k = 128, miss weight 0.9)", () => {
    expect(resolveBands(defaults)).toEqual({ bands: 14, rows: 9 });
  });

  it("takes an explicit bands count, rows = ⌊k / bands⌋", () => {
    expect(resolveBands({ ...defaults, bands: 20 })).toEqual({ bands: 20, rows: 6 });
  });

  it("explains the choice for plan, with the candidate probability at 0.5, 0.7, 0.8, 0.9 and threshold + 0.05", () => {
    const e = explainBands(defaults) as any;
    expect(e).toMatchObject({ steps: "collect per unit, buckets per partition, clusters once", bands: 14, rows: 9 });
    expect(Object.keys(e.candidate_probability)).toEqual(["0.5", "0.7", "0.8", "0.85", "0.9"]);
    expect(e.candidate_probability["0.8"]).toBeCloseTo(candidateProbability(0.8, 14, 9), 4);
    expect(e.candidate_probability["0.85"]).toBeGreaterThanOrEqual(0.95);
  });
});

describe("the weighted optimum", () => {
  it("is the brute-force minimum of (1 − w)·FP + w·FN over every b·r ≤ k that meets the floor", () => {
    // Recomputed here with a plain Riemann sum, independent of the module's integration.
    const area = (f: (s: number) => number, a: number, b: number) => {
      let sum = 0;
      const n = 4000;
      for (let i = 0; i < n; i++) sum += f(a + ((i + 0.5) * (b - a)) / n);
      return (sum * (b - a)) / n;
    };
    for (const [t, k, w] of [
      [0.8, 128, 0.5],
      [0.8, 128, 0.9],
      [0.7, 64, 0.8],
    ]) {
      let best = { cost: Infinity, b: 0, r: 0 };
      for (let b = 1; b <= k; b++)
        for (let r = 1; b * r <= k; r++) {
          if (candidateProbability(t + 0.05, b, r) < 0.95) continue;
          const cost = (1 - w) * area((s) => candidateProbability(s, b, r), 0, t) + w * area((s) => 1 - candidateProbability(s, b, r), t, 1);
          if (cost < best.cost - 1e-9) best = { cost, b, r };
        }
      const c = chooseBands(t, k, w);
      expect([c.bands, c.rows]).toEqual([best.b, best.r]);
    }
  });

  it("gives exactly what evaluating P at every Simpson point for every (b, r) gives: the same choice and the same areas, to the last bit", () => {
    // The search as first written: Simpson's rule on 400 intervals, P evaluated afresh for every (b, r).
    const integrate = (f: (s: number) => number, a: number, b: number) => {
      if (b <= a) return 0;
      const h = (b - a) / 400;
      let sum = f(a) + f(b);
      for (let i = 1; i < 400; i++) sum += (i % 2 === 1 ? 4 : 2) * f(a + i * h);
      return (sum * h) / 3;
    };
    const direct = (t: number, k: number, w: number) => {
      let best: { cost: number; c: unknown } | undefined;
      let floor: { cost: number; c: unknown } | undefined;
      for (let b = 1; b <= k; b++)
        for (let r = 1; b * r <= k; r++) {
          const P = (s: number) => candidateProbability(s, b, r);
          const fp = integrate(P, 0, t);
          const fn = integrate((s) => 1 - P(s), t, 1);
          const cost = (1 - w) * fp + w * fn;
          const c = { bands: b, rows: r, falsePositiveArea: fp, falseNegativeArea: fn };
          if (!best || cost < best.cost) best = { cost, c };
          if (P(Math.min(1, t + 0.05)) >= 0.95 && (!floor || cost < floor.cost)) floor = { cost, c };
        }
      return (floor ?? best)!.c;
    };
    for (const t of [0.3, 0.5, 0.7, 0.75, 0.8, 0.85, 0.9, 0.95, 0.99])
      for (const k of [16, 64, 128])
        for (const w of [0.5, 0.9]) expect(chooseBands(t, k, w), `t ${t}, k ${k}, w ${w}`).toEqual(direct(t, k, w));
  });

  it("without the floor and with equal weights is 9 × 13 at threshold 0.8, k = 128", () => {
    let best = { cost: Infinity, b: 0, r: 0 };
    const area = (f: (s: number) => number, a: number, b: number) => {
      let sum = 0;
      for (let i = 0; i < 4000; i++) sum += f(a + ((i + 0.5) * (b - a)) / 4000);
      return (sum * (b - a)) / 4000;
    };
    for (let b = 1; b <= 128; b++)
      for (let r = 1; b * r <= 128; r++) {
        const cost = 0.5 * area((s) => candidateProbability(s, b, r), 0, 0.8) + 0.5 * area((s) => 1 - candidateProbability(s, b, r), 0.8, 1);
        if (cost < best.cost) best = { cost, b, r };
      }
    expect([best.b, best.r]).toEqual([9, 13]);
  });
});

describe("measured candidate rates", () => {
  // Pairs of generated sets at known Jaccard s; a pair is a candidate when its signatures agree on
  // all rows of at least one band. The rate over n pairs must match 1 − (1 − s^r)^b (J. Leskovec,
  // A. Rajaraman, J. Ullman, Mining of Massive Datasets, ch. 3; from memory) within 4 binomial
  // standard errors.
  const n = 400;
  const union = 400;
  function rate(s: number, bands: number, rows: number, seed: number): number {
    const signer = new MinhashSigner(128, seed);
    const both = Math.round(s * union);
    const onlyA = Math.floor((union - both) / 2);
    const b4 = new Uint8Array(4);
    const dv = new DataView(b4.buffer);
    const h = (id: number) => (dv.setUint32(0, id, true), xxh32(b4, 0, 4, seed));
    const sa = new Uint32Array(128);
    const sb = new Uint32Array(128);
    let hits = 0;
    for (let t = 0; t < n; t++) {
      const base = t * 10_000;
      const A = Uint32Array.from({ length: both + onlyA }, (_, i) => h(base + i));
      const B = Uint32Array.from({ length: union - onlyA }, (_, i) => h(base + (i < both ? i : i + onlyA)));
      signer.sign(A, A.length, sa, 0);
      signer.sign(B, B.length, sb, 0);
      let candidate = false;
      for (let band = 0; band < bands && !candidate; band++) {
        const seedB = deriveSeed(seed, 100 + band);
        candidate = xxh32Lanes(sa, band * rows, rows, seedB) === xxh32Lanes(sb, band * rows, rows, seedB);
      }
      if (candidate) hits++;
    }
    return hits / n;
  }

  for (const [bands, rows] of [
    [14, 9],
    [9, 13],
    [20, 5],
  ]) {
    it(`match the curve for ${bands} × ${rows} at s = 0.5, 0.7, 0.8, 0.9`, () => {
      for (const s of [0.5, 0.7, 0.8, 0.9]) {
        const p = candidateProbability(s, bands, rows);
        const measured = rate(s, bands, rows, 11);
        const se = Math.sqrt((p * (1 - p)) / n);
        expect(Math.abs(measured - p), `s = ${s}: measured ${measured}, curve ${p.toFixed(4)}`).toBeLessThanOrEqual(4 * se + 1 / n);
      }
    });
  }

  it("uses the same band keys as the stage's signer", () => {
    const params = { shingle: { kind: "word" as const, ngram: 2, lowercase: true }, permutations: 128, bands: 14, rows: 9, seed: 7 };
    const r = new BatchSigner(params).sign(["tram door fault at the depot gate"]);
    for (let band = 0; band < 14; band++) expect(r.bandKeys[band]).toBe(xxh32Lanes(r.signatures, band * 9, 9, deriveSeed(7, 100 + band)));
  });
});
