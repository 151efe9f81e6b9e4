// An open-addressing hash table from 64-bit keys (two 32-bit halves) to int32 values, on typed arrays.
//
// Why not Map<bigint, number>? A BigInt key costs tens of bytes and a slow hash; here a key costs
// 8 bytes plus 4 for its value, at a load factor between 0.35 and 0.7 (so 17 to 34 bytes per key),
// and lookups use only 32-bit integer arithmetic. Keys come from well-mixed hashes, so the low
// bits of `lo` pick the slot and linear probing stays short.

const MAX_LOAD = 0.7;

export class HashMap64 {
  private hi: Uint32Array;
  private lo: Uint32Array;
  private val: Int32Array;
  private used: Uint8Array;
  private mask: number;
  size = 0;

  constructor(expected = 1024) {
    let cap = 16;
    while (cap * MAX_LOAD < expected) cap *= 2;
    this.hi = new Uint32Array(cap);
    this.lo = new Uint32Array(cap);
    this.val = new Int32Array(cap);
    this.used = new Uint8Array(cap);
    this.mask = cap - 1;
  }

  /** Bytes held by the table's arrays. */
  get bytes(): number {
    return this.used.length * 13;
  }

  private slot(hi: number, lo: number): number {
    let i = lo & this.mask;
    while (this.used[i] && (this.hi[i] !== hi || this.lo[i] !== lo)) i = (i + 1) & this.mask;
    return i;
  }

  /** The value stored for the key, or −1 when absent. */
  get(hi: number, lo: number): number {
    const i = this.slot(hi >>> 0, lo >>> 0);
    return this.used[i] ? this.val[i] : -1;
  }

  has(hi: number, lo: number): boolean {
    return this.used[this.slot(hi >>> 0, lo >>> 0)] === 1;
  }

  /** Stores `value` under the key unless it is present; returns the value now stored. */
  setIfAbsent(hi: number, lo: number, value: number): number {
    hi >>>= 0;
    lo >>>= 0;
    let i = this.slot(hi, lo);
    if (this.used[i]) return this.val[i];
    if ((this.size + 1) > this.used.length * MAX_LOAD) {
      this.grow();
      i = this.slot(hi, lo);
    }
    this.used[i] = 1;
    this.hi[i] = hi;
    this.lo[i] = lo;
    this.val[i] = value;
    this.size++;
    return value;
  }

  /** Empties the table, keeping its room (one table serves many small sets in turn). */
  clear(): void {
    this.used.fill(0);
    this.size = 0;
  }

  /** Calls `each(hi, lo, value)` for every key, in slot order. */
  forEach(each: (hi: number, lo: number, value: number) => void): void {
    for (let i = 0; i < this.used.length; i++) if (this.used[i]) each(this.hi[i], this.lo[i], this.val[i]);
  }

  private grow(): void {
    const { hi, lo, val, used } = this;
    const cap = used.length * 2;
    this.hi = new Uint32Array(cap);
    this.lo = new Uint32Array(cap);
    this.val = new Int32Array(cap);
    this.used = new Uint8Array(cap);
    this.mask = cap - 1;
    for (let j = 0; j < used.length; j++) {
      if (!used[j]) continue;
      const i = this.slot(hi[j], lo[j]);
      this.used[i] = 1;
      this.hi[i] = hi[j];
      this.lo[i] = lo[j];
      this.val[i] = val[j];
    }
  }
}
