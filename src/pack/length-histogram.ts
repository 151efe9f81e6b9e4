// Document lengths in power-of-two buckets: bucket k holds lengths 2^k … 2^(k+1) − 1 tokens.

export interface HistogramBucket {
  /** Shortest length in the bucket (a power of two). */
  min: number;
  /** Longest length in the bucket. */
  max: number;
  documents: number;
}

/**
 * Power-of-two buckets keep the histogram to at most 32 lines whatever the corpus, and read well
 * on a log scale, which is how document lengths spread (a few long manuals, many short tickets).
 */
export class LengthHistogram {
  private readonly counts = new Float64Array(32);

  add(length: number): void {
    if (length < 1) return;
    this.counts[31 - Math.clz32(length)]++;
  }

  /** Adds the documents of buckets another histogram gave (a merge of two histograms). */
  addBuckets(buckets: readonly HistogramBucket[]): void {
    for (const b of buckets) this.counts[31 - Math.clz32(b.min)] += b.documents;
  }

  /** Buckets from the lowest to the highest non-empty one (empty buckets in between included, so plots need no gaps filled). */
  buckets(): HistogramBucket[] {
    let lo = 0;
    let hi = this.counts.length - 1;
    while (lo <= hi && this.counts[lo] === 0) lo++;
    while (hi >= lo && this.counts[hi] === 0) hi--;
    const out: HistogramBucket[] = [];
    for (let k = lo; k <= hi; k++) out.push({ min: 2 ** k, max: 2 ** (k + 1) - 1, documents: this.counts[k] });
    return out;
  }
}
