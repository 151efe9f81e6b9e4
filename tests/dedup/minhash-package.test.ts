// A second, independent estimator: the `minhash` package from the npm registry (0.0.9), on the same real-text pairs.
import { createRequire } from "node:module";
import { describe, expect, it } from "vitest";
import { Shingler, jaccard, shingleSet } from "../../src/dedup/shingles.js";
import { MinhashSigner, estimateJaccard } from "../../src/dedup/signature.js";
import { copyrightParagraphs } from "./copyright-corpus.js";

// The package is CommonJS without types: { Minhash } with update(string) and jaccard(other); its
// permutations are (a·h + b) mod p over a 32-bit string hash, seeded by `seed` (from its source).
const { Minhash } = createRequire(import.meta.url)("minhash") as {
  Minhash: new (o?: { numPerm?: number; seed?: number }) => { update(s: string): void; jaccard(o: unknown): number };
};

/** Pairs of copyright paragraphs with 0 < J < 1, up to `per` from each tenth of [0, 1), drawn by seeded reservoir sampling. */
function stratifiedPairs(sets: Uint32Array[], per: number): [number, number, number][] {
  let s = 99;
  const rnd = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
  const strata = Array.from({ length: 10 }, () => ({ seen: 0, pairs: [] as [number, number, number][] }));
  for (let i = 0; i < sets.length; i++)
    for (let j = i + 1; j < sets.length; j++) {
      const J = jaccard(sets[i], sets[j]);
      if (J <= 0 || J >= 1) continue;
      const st = strata[Math.min(9, Math.floor(J * 10))];
      st.seen++;
      if (st.pairs.length < per) st.pairs.push([i, j, J]);
      else {
        const r = Math.floor(rnd() * st.seen);
        if (r < per) st.pairs[r] = [i, j, J];
      }
    }
  return strata.flatMap((st) => st.pairs);
}

describe("against the minhash package", () => {
  it("our mean absolute error against exact Jaccard is no larger than the package's, on the same pairs and the same shingle sets", () => {
    const sh = new Shingler({ kind: "word", ngram: 5, lowercase: true }, 7);
    const sets = copyrightParagraphs().map((p) => shingleSet(sh, p.text));
    const pairs = stratifiedPairs(sets, 300);
    expect(pairs.length).toBeGreaterThan(2000);
    for (const seed of [1, 2, 3]) {
      const ours = new MinhashSigner(128, seed);
      const sig = new Map<number, Uint32Array>();
      const signature = (i: number) => {
        let out = sig.get(i);
        if (!out) {
          out = new Uint32Array(128);
          ours.sign(sets[i], sets[i].length, out, 0);
          sig.set(i, out);
        }
        return out;
      };
      const theirs = new Map<number, InstanceType<typeof Minhash>>();
      const package_ = (i: number) => {
        let m = theirs.get(i);
        if (!m) {
          // The same set: each distinct shingle (our 32-bit hash, as text) once.
          m = new Minhash({ numPerm: 128, seed });
          for (const h of sets[i]) m.update(String(h));
          theirs.set(i, m);
        }
        return m;
      };
      let errOurs = 0;
      let errTheirs = 0;
      for (const [i, j, J] of pairs) {
        errOurs += Math.abs(estimateJaccard(signature(i), 0, signature(j), 0, 128) - J);
        errTheirs += Math.abs(package_(i).jaccard(package_(j)) - J);
      }
      const maeOurs = errOurs / pairs.length;
      const maeTheirs = errTheirs / pairs.length;
      console.log(`seed ${seed}: ${pairs.length} pairs, mean absolute error: siftpack ${maeOurs.toFixed(4)}, minhash package ${maeTheirs.toFixed(4)}`);
      expect(maeOurs).toBeLessThanOrEqual(maeTheirs);
    }
  });
});
