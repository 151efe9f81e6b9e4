// LSH banding: the candidate curve 1 − (1 − s^r)^b and the choice of bands × rows for a threshold.
//
// Cutting a k-value signature into b bands of r rows and calling two documents candidates when they
// agree on every row of at least one band makes a pair of similarity s a candidate with probability
// 1 − (1 − s^r)^b (J. Leskovec, A. Rajaraman, J. Ullman, Mining of Massive Datasets, ch. 3; from
// memory). Only b·r ≤ k values are banded; all k are still used to estimate similarity.

/** Probability that a pair of Jaccard similarity s shares at least one band bucket. */
export function candidateProbability(s: number, bands: number, rows: number): number {
  return 1 - Math.pow(1 - Math.pow(s, rows), bands);
}

/** The similarity where the curve is steepest, ≈ (1/b)^(1/r): the threshold the banding itself implies. */
export function bandThreshold(bands: number, rows: number): number {
  return Math.pow(1 / bands, 1 / rows);
}

const STEPS = 400;

export interface BandChoice {
  bands: number;
  rows: number;
  /** Area under the curve below the threshold: how many dissimilar pairs become candidates. */
  falsePositiveArea: number;
  /** Area above the curve beyond the threshold: how many similar pairs are missed. */
  falseNegativeArea: number;
}

/** The probability every default choice reaches at s = threshold + RECALL_MARGIN (capped at 1). */
export const RECALL_FLOOR = 0.95;
export const RECALL_MARGIN = 0.05;

/**
 * Chooses b × r (b·r ≤ k) minimising (1 − w)·FP + w·FN, where FP = ∫₀ᵗ P(s) ds and FN = ∫ₜ¹ 1 − P(s) ds
 * and w = missWeight. A lost duplicate costs more than a checked candidate (a candidate is only a
 * signature comparison), hence the default w = 0.9. Among the choices, only those that make a pair at
 * s = t + 0.05 a candidate with probability ≥ 0.95 are considered, when any is possible at this k;
 * with w = 0.5 at t = 0.8 and k = 128 the optimum would be 9 × 13, which finds a pair at s = 0.8 only
 * 40 % of the time (tests/dedup/lsh-params.test.ts pins both).
 */
export function chooseBands(threshold: number, k: number, missWeight: number): BandChoice {
  let best: BandChoice | undefined;
  let bestCost = Infinity;
  let bestFloor: BandChoice | undefined;
  let bestFloorCost = Infinity;
  const sHigh = Math.min(1, threshold + RECALL_MARGIN);
  // FP and FN by Simpson's rule on STEPS intervals (the curve is smooth; 400 steps is far below 1e-6
  // error), with s^r at its points computed once per r instead of once per (b, r).
  const powers = (xs: Float64Array | undefined) => (xs ? Array.from({ length: k + 1 }, (_, r) => xs.map((x) => Math.pow(x, r))) : undefined);
  const belowR = powers(simpsonPoints(0, threshold));
  const aboveR = powers(simpsonPoints(threshold, 1));
  for (let b = 1; b <= k; b++) {
    for (let r = 1; b * r <= k; r++) {
      const fp = belowR ? simpson(belowR[r], (sr) => 1 - Math.pow(1 - sr, b), 0, threshold) : 0;
      const fn = aboveR ? simpson(aboveR[r], (sr) => 1 - (1 - Math.pow(1 - sr, b)), threshold, 1) : 0;
      const cost = (1 - missWeight) * fp + missWeight * fn;
      const choice = { bands: b, rows: r, falsePositiveArea: fp, falseNegativeArea: fn };
      // Strict "<": ties keep the smaller b, then the smaller r (fewer buckets to store).
      if (cost < bestCost) {
        bestCost = cost;
        best = choice;
      }
      if (candidateProbability(sHigh, b, r) >= RECALL_FLOOR && cost < bestFloorCost) {
        bestFloorCost = cost;
        bestFloor = choice;
      }
    }
  }
  return bestFloor ?? best!;
}

/** The points of Simpson's rule on STEPS intervals of [a, b] (a and b themselves at the ends), or undefined when [a, b] is empty. */
function simpsonPoints(a: number, b: number): Float64Array | undefined {
  if (b <= a) return undefined;
  const h = (b - a) / STEPS;
  const xs = new Float64Array(STEPS + 1);
  for (let i = 1; i < STEPS; i++) xs[i] = a + i * h;
  xs[0] = a;
  xs[STEPS] = b;
  return xs;
}

/** ∫ f over [a, b] by Simpson's rule, f(x) = g(x^r), with x^r given at simpsonPoints(a, b). */
function simpson(pr: Float64Array, g: (sr: number) => number, a: number, b: number): number {
  const h = (b - a) / STEPS;
  let sum = g(pr[0]) + g(pr[STEPS]);
  for (let i = 1; i < STEPS; i++) sum += (i % 2 === 1 ? 4 : 2) * g(pr[i]);
  return (sum * h) / 3;
}

/** Bands × rows for the options: explicit `bands` (rows = ⌊k / bands⌋) or the weighted optimum. */
export function resolveBands(o: { threshold: number; permutations: number; bands?: number; miss_weight: number }): { bands: number; rows: number } {
  if (o.bands !== undefined) return { bands: o.bands, rows: Math.floor(o.permutations / o.bands) };
  const key = `${o.threshold}/${o.permutations}/${o.miss_weight}`;
  let c = chosen.get(key);
  if (!c) chosen.set(key, (c = chooseBands(o.threshold, o.permutations, o.miss_weight)));
  return { bands: c.bands, rows: c.rows };
}

/** `plan` and `create` ask for the same choice; the search takes milliseconds but need not run twice. */
const chosen = new Map<string, BandChoice>();

/** What `siftpack plan` shows for a MinHash dedup: the banding and its candidate probabilities. */
export function explainBands(o: { threshold: number; permutations: number; bands?: number; miss_weight: number }): Record<string, unknown> {
  const { bands, rows } = resolveBands(o);
  const round = (x: number) => Math.round(x * 10000) / 10000;
  const sHigh = round(Math.min(1, o.threshold + RECALL_MARGIN));
  const at = [...new Set([0.5, 0.7, 0.8, 0.9, sHigh])].sort((a, b) => a - b);
  const probs: Record<string, number> = {};
  for (const s of at) probs[String(s)] = round(candidateProbability(s, bands, rows));
  return { steps: "collect per unit, buckets per partition, clusters once", bands, rows, band_threshold: round(bandThreshold(bands, rows)), candidate_probability: probs };
}
