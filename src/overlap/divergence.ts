// Unigram distributions of token ids: entropy, Jensen–Shannon divergence, add-one cross-entropy (all in bits).

/** Token-id counts of one split; ids at or above the array's length grow it. */
export class UnigramCounts {
  counts: Float64Array;
  total = 0;
  /** One more than the largest id counted (0 when none). */
  ids = 0;

  constructor(vocabSize: number) {
    this.counts = new Float64Array(Math.max(1, vocabSize));
  }

  add(tokens: ArrayLike<number>): void {
    let c = this.counts;
    for (let i = 0; i < tokens.length; i++) {
      const t = tokens[i];
      if (t >= c.length) {
        const next = new Float64Array(Math.max(t + 1, 2 * c.length));
        next.set(c);
        this.counts = c = next;
      }
      c[t]++;
      if (t >= this.ids) this.ids = t + 1;
    }
    this.total += tokens.length;
  }
}

/** Shannon entropy −Σ p log₂ p of the distribution counts / total (0 for an empty one). */
export function entropyBits(counts: ArrayLike<number>, total: number): number {
  if (total === 0) return 0;
  let h = 0;
  for (let i = 0; i < counts.length; i++) {
    const c = counts[i];
    if (c > 0) h -= (c / total) * Math.log2(c / total);
  }
  return h;
}

/**
 * Jensen–Shannon divergence of P = a / Σa and Q = b / Σb, in bits: ½ D(P‖M) + ½ D(Q‖M) with
 * M = ½ (P + Q). It is symmetric, finite even where one distribution has zeros, and lies in [0, 1]
 * (J. Lin, "Divergence measures based on the Shannon entropy", IEEE Trans. Inf. Theory 37(1),
 * 1991; from memory). Computed term by term rather than as H(M) − ½H(P) − ½H(Q), which loses
 * precision to cancellation when P and Q are close. Arrays of different length are zero-padded.
 */
export function jensenShannonBits(a: ArrayLike<number>, aTotal: number, b: ArrayLike<number>, bTotal: number): number {
  if (aTotal === 0 || bTotal === 0) return aTotal === bTotal ? 0 : 1;
  let d = 0;
  const n = Math.max(a.length, b.length);
  for (let i = 0; i < n; i++) {
    const p = i < a.length ? a[i] / aTotal : 0;
    const q = i < b.length ? b[i] / bTotal : 0;
    const m = (p + q) / 2;
    if (p > 0) d += 0.5 * p * Math.log2(p / m);
    if (q > 0) d += 0.5 * q * Math.log2(q / m);
  }
  return Math.max(0, Math.min(1, d));
}

/**
 * Cross-entropy of the text counted in `q` under the add-one (Laplace) smoothed unigram model of
 * `ref` over a vocabulary of `vocabSize` ids: −(1/N_q) Σ_t q_t · log₂((ref_t + 1) / (N_ref + V)),
 * in bits per token. Every id gets probability at least 1 / (N_ref + V), so the value is finite
 * even for tokens train never saw. The caller passes a V that covers every id counted.
 */
export function crossEntropyAddOneBits(q: ArrayLike<number>, qTotal: number, ref: ArrayLike<number>, refTotal: number, vocabSize: number): number {
  if (qTotal === 0) return 0;
  const denom = refTotal + vocabSize;
  let h = 0;
  for (let i = 0; i < q.length; i++) {
    const c = q[i];
    if (c > 0) h -= c * Math.log2(((i < ref.length ? ref[i] : 0) + 1) / denom);
  }
  return h / qTotal;
}
