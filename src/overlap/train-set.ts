// The set of 64-bit keys seen in the reference split (train): exact while small, a Bloom filter once large.
import { BlockedBloom } from "./bloom.js";
import { HashMap64 } from "./hash-map64.js";

export interface TrainSetLimits {
  /** Keys held exactly before switching to the filter (at most ~34 bytes each). */
  exactKeys: number;
  /** Size of the filter, as log2 of its bits. */
  log2Bits: number;
  /** Bits set per key in the filter. */
  hashes: number;
}

/**
 * Defaults: up to 4 Mi keys exactly (a table of at most 8 Mi slots × 13 bytes = 104 MiB), then a
 * 2^30-bit (128 MiB) filter setting 7 bits per key; both exist for a moment during the switch, so
 * memory peaks near 232 MiB however large train is. Seven bits suit 10⁷–10⁸ distinct keys in 2^30
 * bits: an unblocked filter would give (1 − e^(−7·10⁸/2^30))^7 ≈ 0.6 % at 10⁸ keys and far below
 * 10⁻⁶ at 10⁷ (the textbook formula, B. H. Bloom 1970; from memory). Beyond ~10⁹ distinct keys the
 * filter saturates, and its measured false-positive rate, reported with the figures, says so.
 */
export const DEFAULT_LIMITS: TrainSetLimits = { exactKeys: 4 << 20, log2Bits: 30, hashes: 7 };

export class TrainSet {
  private exact: HashMap64 | undefined = new HashMap64(1 << 16);
  private bloom: BlockedBloom | undefined;

  constructor(private readonly limits: TrainSetLimits = DEFAULT_LIMITS) {}

  add(hi: number, lo: number): void {
    if (this.exact) {
      this.exact.setIfAbsent(hi, lo, 0);
      if (this.exact.size > this.limits.exactKeys) this.toBloom();
    } else this.bloom!.add(hi, lo);
  }

  has(hi: number, lo: number): boolean {
    return this.exact ? this.exact.has(hi, lo) : this.bloom!.has(hi, lo);
  }

  /** How membership was decided, for the figures: exact, or a filter with its measured false-positive rate. */
  describe(): { kind: "exact"; keys: number } | { kind: "bloom"; bits: number; hashes: number; false_positive_rate: number } {
    if (this.exact) return { kind: "exact", keys: this.exact.size };
    const b = this.bloom!;
    return { kind: "bloom", bits: b.blocks * 512, hashes: b.hashes, false_positive_rate: b.falsePositiveRate() };
  }

  private toBloom(): void {
    const bloom = new BlockedBloom(this.limits.log2Bits, this.limits.hashes);
    this.exact!.forEach((hi, lo) => bloom.add(hi, lo));
    this.exact = undefined;
    this.bloom = bloom;
  }
}
