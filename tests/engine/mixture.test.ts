// The mixture plan: a worked example computed by hand, the bounds over random sources and shares,
// the epoch warning and limit, and the stability of one source's selection.
import { beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import { copiesOf, EPOCH_WARNING, mixtureRank, partOf, planMixture, type SourceMixture, type TallyEntry } from "../../src/engine/mixture.js";
import { loadHasher } from "../../src/lib/hash.js";
import { planByBuckets } from "../../src/engine/mixture-tally.js";
import type { MixtureConfig } from "../../src/pipeline/config.js";

const mix = (shares: Record<string, number>, train_tokens?: number, max_epochs = 16): MixtureConfig => ({ shares, train_tokens, max_epochs, groups: undefined });

beforeAll(async () => {
  await loadHasher();
});

describe("planMixture: a worked example", () => {
  // Three sources, ranks given so the order is known. Worked by hand:
  //   budget 1500, shares A 0.5, B 0.3, C 0.2 → asked A 750, B 450, C 300.
  //   A has 1000 tokens: factor 0.75, no whole repeat, 750 more: by rank 200 (0.1), 400 (0.2),
  //     100 (0.4) make 700; the next (rank 0.7, 300 tokens) crosses 750: its first 50 tokens are
  //     taken as a part copy → A uses 750.
  //   B has 200 tokens: factor 2.25, two whole repeats (400), 50 more: its first by rank has 50
  //     tokens, exactly → B uses 450, no part copy.
  //   C has 300 tokens: factor 1 → C uses 300.
  //   Total 1500 = the budget; achieved shares 0.5, 0.3, 0.2.
  const tallies = new Map<string, TallyEntry[]>([
    ["A", [{ rank: 0.4, tokens: 100 }, { rank: 0.1, tokens: 200 }, { rank: 0.7, tokens: 300 }, { rank: 0.2, tokens: 400 }]],
    ["B", [{ rank: 0.9, tokens: 150 }, { rank: 0.3, tokens: 50 }]],
    ["C", [{ rank: 0.5, tokens: 100 }, { rank: 0.6, tokens: 100 }, { rank: 0.8, tokens: 100 }]],
  ]);
  const plan = planMixture(mix({ A: 0.5, B: 0.3, C: 0.2 }, 1500), ["A", "B", "C"], tallies);
  const by = Object.fromEntries(plan.sources.map((s) => [s.source, s]));

  it("gives the factors, token totals and shares worked by hand", () => {
    expect(plan.train_tokens).toBe(1500);
    expect(plan.budget_from).toBe("asked");
    expect([by.A.tokens_available, by.B.tokens_available, by.C.tokens_available]).toEqual([1000, 200, 300]);
    expect([by.A.tokens_asked, by.B.tokens_asked, by.C.tokens_asked]).toEqual([750, 450, 300]);
    expect([by.A.whole, by.B.whole, by.C.whole]).toEqual([0, 2, 1]);
    expect([by.A.tokens_used, by.B.tokens_used, by.C.tokens_used]).toEqual([750, 450, 300]);
    expect(plan.tokens_used).toBe(1500);
    expect([by.A.epochs, by.B.epochs, by.C.epochs]).toEqual([0.75, 2.25, 1]);
    expect(by.A.achieved_share).toBeCloseTo(0.5, 12);
    expect(by.B.achieved_share).toBeCloseTo(0.3, 12);
    expect(plan.warnings).toEqual([]);
  });

  it("gives each record its copies: the records by rank up to the cut get one more, the crossing one a part copy", () => {
    const copies = (s: string) => tallies.get(s)!.map((e) => copiesOf(by[s], e.rank));
    const parts = (s: string) => tallies.get(s)!.map((e) => partOf(by[s], e.rank));
    expect(copies("A")).toEqual([1, 1, 0, 1]);
    expect(parts("A")).toEqual([0, 0, 50, 0]);
    expect(copies("B")).toEqual([2, 3]);
    expect(parts("B")).toEqual([0, 0]);
    expect(copies("C")).toEqual([1, 1, 1]);
    expect(parts("C")).toEqual([0, 0, 0]);
  });

  it("without a budget takes the largest that repeats no source", () => {
    // 1000 / 0.5 = 2000, 200 / 0.3 = 666.7, 300 / 0.2 = 1500: B decides, and is used once exactly.
    const p = planMixture(mix({ A: 0.5, B: 0.3, C: 0.2 }), ["A", "B", "C"], tallies);
    expect(p.budget_from).toBe("largest without repetition");
    expect(p.train_tokens).toBeCloseTo(200 / 0.3, 9);
    const b = p.sources.find((s) => s.source === "B")!;
    expect([b.whole, b.tokens_used, b.epochs]).toEqual([1, 200, 1]);
    for (const s of p.sources) expect(s.epochs).toBeLessThanOrEqual(1);
  });

  it("splits a group's share among its members by their tokens available", () => {
    const p = planMixture({ ...mix({ A: 0.5, rest: 0.5 }, 1500), groups: { rest: ["B", "C"] } }, ["A", "B", "C"], tallies);
    const [, b, c] = p.sources;
    // 750 for B and C together, 200 : 300 → 300 and 450, the same factor 1.5 for both.
    expect([b.group, b.tokens_asked, c.tokens_asked]).toEqual(["rest", 300, 450]);
    expect(b.tokens_asked / b.tokens_available).toBeCloseTo(c.tokens_asked / c.tokens_available, 12);
  });

  it(`warns above ${EPOCH_WARNING} epochs, citing the finding, and fails above max_epochs with the figures`, () => {
    // Budget 3000: B is asked 900 of its 200 tokens: 4 whole repeats (800) and 100 more: the 50-token
    // record (rank 0.3) whole and the first 50 of the 150-token one: 900 used, 4.5 epochs.
    const p = planMixture(mix({ A: 0.5, B: 0.3, C: 0.2 }, 3000), ["A", "B", "C"], tallies);
    expect(p.warnings).toHaveLength(1);
    expect(p.warnings[0]).toMatch(/source "B" is seen 4\.50 times \(epochs\).*Muennighoff et al\. 2023/);
    expect(() => planMixture(mix({ A: 0.5, B: 0.3, C: 0.2 }, 3000, 4), ["A", "B", "C"], tallies, "p.yaml")).toThrow(
      'p.yaml: a train budget of 3000 tokens needs more than max_epochs 4 of "B": "B" has 200 train tokens for a share of 0.3 (900 tokens), 4.50 epochs; lower mixture.train_tokens or that share, add data, or raise mixture.max_epochs',
    );
  });

  it("fails naming a source that has a share and no train tokens", () => {
    expect(() => planMixture(mix({ A: 0.5, D: 0.5 }, 100), ["A", "D"], tallies, "p.yaml")).toThrow('p.yaml: the mixture cannot be met: source "D" has a share of 0.5 but no train tokens');
  });
});

describe("planMixture over random sources and shares", () => {
  const source = fc.array(fc.integer({ min: 1, max: 600 }), { minLength: 1, maxLength: 40 });
  const cases = fc.record({
    sizes: fc.array(source, { minLength: 1, maxLength: 5 }),
    weights: fc.array(fc.integer({ min: 0, max: 10 }), { minLength: 5, maxLength: 5 }),
    scale: fc.double({ min: 0.05, max: 6, noNaN: true }),
    seed: fc.integer({ min: 0, max: 1000 }),
  });
  const build = (sizes: number[][], seed: number) =>
    new Map(sizes.map((list, s) => [`s${s}`, list.map((tokens, i) => ({ rank: mixtureRank(`s${s}`, `r${i}`, seed), tokens }))]));

  it("reaches every source's tokens asked to the token (rounded), and so the budget within half a token per source", () => {
    fc.assert(
      fc.property(cases, ({ sizes, weights, scale, seed }) => {
        const w = sizes.map((_, s) => weights[s] + (s === 0 ? 1 : 0));
        const sum = w.reduce((a, x) => a + x, 0);
        const shares = Object.fromEntries(w.map((x, s) => [`s${s}`, x / sum]));
        const all = sizes.flat().reduce((a, x) => a + x, 0);
        const budget = Math.max(1, Math.round(all * scale));
        const tallies = build(sizes, seed);
        const plan = planMixture(mix(shares, budget, 1e9), [...tallies.keys()], tallies);
        for (const s of plan.sources) {
          const list = tallies.get(s.source)!;
          // Ranks here never collide, so no group of equal ranks is taken whole or not at all.
          expect(Math.abs(s.tokens_used - s.tokens_asked)).toBeLessThanOrEqual(0.5 + 1e-9);
          // What the records' copies and the one part copy add up to is what the plan says it uses.
          expect(list.reduce((a, e) => a + e.tokens * copiesOf(s, e.rank) + partOf(s, e.rank), 0)).toBe(s.tokens_used);
          expect(list.filter((e) => partOf(s, e.rank) > 0).length).toBeLessThanOrEqual(1);
          for (const e of list) expect(partOf(s, e.rank)).toBeLessThan(e.tokens);
          expect(s.epochs).toBeCloseTo(s.tokens_used / s.tokens_available, 9);
        }
        expect(Math.abs(plan.tokens_used - budget)).toBeLessThanOrEqual(0.5 * plan.sources.length + 1e-6);
      }),
      { numRuns: 300, seed: 11 },
    );
  });

  it("is stable: adding records to one source changes no other source's selection", () => {
    fc.assert(
      fc.property(cases, fc.array(fc.integer({ min: 1, max: 600 }), { minLength: 1, maxLength: 10 }), ({ sizes, scale, seed }, more) => {
        if (sizes.length < 2) return;
        const shares = Object.fromEntries(sizes.map((_, s) => [`s${s}`, 1 / sizes.length]));
        const budget = Math.round(sizes.flat().reduce((a, x) => a + x, 0) * scale) + 1;
        const before = build(sizes, seed);
        const after = build([[...sizes[0], ...more], ...sizes.slice(1)], seed);
        const p1 = planMixture(mix(shares, budget, 1e9), [...before.keys()], before);
        const p2 = planMixture(mix(shares, budget, 1e9), [...after.keys()], after);
        for (let s = 1; s < sizes.length; s++) {
          const list = before.get(`s${s}`)!;
          const sel = (p: SourceMixture) => list.map((e) => [copiesOf(p, e.rank), partOf(p, e.rank)]);
          expect(sel(p2.sources[s])).toEqual(sel(p1.sources[s]));
        }
      }),
      { numRuns: 200, seed: 5 },
    );
  });

  it("gives the same selection planned by buckets of ranks (as a build merges) as over every record", async () => {
    await fc.assert(
      fc.asyncProperty(cases, fc.constantFrom(1, 2, 16, 1 << 16), async ({ sizes, weights, scale, seed }, count) => {
        const w = sizes.map((_, s) => weights[s] + 1);
        const sum = w.reduce((a, x) => a + x, 0);
        const shares = Object.fromEntries(w.map((x, s) => [`s${s}`, x / sum]));
        const budget = Math.max(1, Math.round(sizes.flat().reduce((a, x) => a + x, 0) * scale));
        const tallies = build(sizes, seed);
        const names = [...tallies.keys()];
        const whole = planMixture(mix(shares, budget, 1e9), names, tallies);
        const bucketed = await planByBuckets(mix(shares, budget, 1e9), names, "p.yaml", async (f) => {
          for (const [name, list] of tallies) for (const e of list) f(name, e.rank, e.tokens);
        }, count);
        for (const [i, s] of whole.sources.entries()) {
          const b = bucketed.sources[i];
          expect([b.tokens_used, b.extra_documents, b.whole]).toEqual([s.tokens_used, s.extra_documents, s.whole]);
          const list = tallies.get(s.source)!;
          expect(list.map((e) => [copiesOf(b, e.rank), partOf(b, e.rank)])).toEqual(list.map((e) => [copiesOf(s, e.rank), partOf(s, e.rank)]));
        }
      }),
      { numRuns: 200, seed: 3 },
    );
  });
});
