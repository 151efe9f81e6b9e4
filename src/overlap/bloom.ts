// A blocked Bloom filter over 64-bit keys, with its false-positive rate estimated from its own fill.
//
// All k bits of a key lie in one 512-bit block (one 64-byte cache line), chosen by the key's high
// half, so an insert or lookup touches one cache line instead of k (the "blocked" Bloom filter of
// F. Putze, P. Sanders, J. Singler, "Cache-, Hash- and Space-Efficient Bloom Filters", 2007; from
// memory). Positions within the block come from the low half by double hashing, g1 + i·g2
// (A. Kirsch, M. Mitzenmacher, "Less Hashing, Same Performance", 2006; from memory).
//
// The false-positive rate is not taken from the textbook formula (which assumes a known number of
// distinct keys and unblocked bits) but measured: a key absent from the filter lands in a uniformly
// random block b and is reported present when its k bits are all set, which happens with
// probability about fill(b)^k; the rate is the mean of that over the blocks.
import { fmix32 } from "../lib/fmix32.js";

const BLOCK_WORDS = 16; // 16 × 32 bits = 512 bits = one 64-byte cache line

export class BlockedBloom {
  readonly bits: Uint32Array;
  readonly blocks: number;

  /** `log2Bits` from 9 (one block) to 34; `hashes` bits are set per key. */
  constructor(
    log2Bits: number,
    readonly hashes: number,
  ) {
    if (!Number.isInteger(log2Bits) || log2Bits < 9 || log2Bits > 34) throw new RangeError(`log2Bits must be an integer from 9 to 34, got ${log2Bits}`);
    this.blocks = 2 ** (log2Bits - 9);
    this.bits = new Uint32Array(this.blocks * BLOCK_WORDS);
  }

  private base(hi: number): number {
    // hi is uniform on [0, 2^32): scaling picks a block without modulo bias beyond 2^-32.
    return Math.floor(((hi >>> 0) / 4294967296) * this.blocks) * BLOCK_WORDS;
  }

  add(hi: number, lo: number): void {
    const base = this.base(hi);
    const g1 = lo >>> 0;
    const g2 = fmix32(lo ^ hi) | 1;
    for (let i = 0; i < this.hashes; i++) {
      const bit = (g1 + Math.imul(i, g2)) >>> 23; // top 9 bits of the 32-bit sum: 0..511
      this.bits[base + (bit >>> 5)] |= 1 << (bit & 31);
    }
  }

  has(hi: number, lo: number): boolean {
    const base = this.base(hi);
    const g1 = lo >>> 0;
    const g2 = fmix32(lo ^ hi) | 1;
    for (let i = 0; i < this.hashes; i++) {
      const bit = (g1 + Math.imul(i, g2)) >>> 23;
      if ((this.bits[base + (bit >>> 5)] & (1 << (bit & 31))) === 0) return false;
    }
    return true;
  }

  /** Estimated probability that a key never added is reported present: mean over blocks of fill^k. */
  falsePositiveRate(): number {
    let sum = 0;
    for (let b = 0; b < this.blocks; b++) {
      let set = 0;
      for (let w = 0; w < BLOCK_WORDS; w++) set += popcount(this.bits[b * BLOCK_WORDS + w]);
      sum += Math.pow(set / 512, this.hashes);
    }
    return sum / this.blocks;
  }
}

function popcount(x: number): number {
  x -= (x >>> 1) & 0x55555555;
  x = (x & 0x33333333) + ((x >>> 2) & 0x33333333);
  x = (x + (x >>> 4)) & 0x0f0f0f0f;
  return Math.imul(x, 0x01010101) >>> 24;
}
