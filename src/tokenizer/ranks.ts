// Decodes a js-tiktoken rank file into a byte-sequence -> rank table that is probed without allocating.
//
// The rank file text is lines of "<label> <first rank> <base64 token> <base64 token> ...": tokens on a
// line have consecutive ranks. All token bytes go into one pool; an open-addressing hash table maps
// a byte range of any buffer to its rank, so the BPE loop never builds strings or arrays to look up.

const BASE64 = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
const B64_VALUE = new Int8Array(128).fill(-1);
for (let i = 0; i < BASE64.length; i++) B64_VALUE[BASE64.charCodeAt(i)] = i;

export const NO_RANK = -1;

export class RankTable {
  /** Number of ranks present. */
  readonly size: number;
  /** Largest rank present. */
  readonly maxRank: number;
  private readonly pool: Uint8Array;
  /** Per rank: offset into `pool`, and length (0 = rank absent). */
  private readonly offsets: Uint32Array;
  private readonly lengths: Uint16Array;
  /** Hash slots holding rank + 1 (0 = empty); power-of-two sized, at most half full. */
  private readonly slots: Int32Array;
  private readonly mask: number;
  /** Rank of each two-byte token indexed by (b0 << 8 | b1): the first BPE pass only asks about pairs. */
  readonly pairRanks: Int32Array;
  /** Rank of each single byte (byte-level BPE has all 256). */
  readonly byteRanks: Int32Array;

  constructor(bpeRanks: string) {
    const lines = bpeRanks.split("\n").filter((l) => l.length > 0);
    let count = 0;
    let maxRank = -1;
    let poolBytes = 0;
    const parsed: Array<{ first: number; tokens: string[] }> = [];
    for (const line of lines) {
      const fields = line.split(" ");
      const first = Number.parseInt(fields[1] ?? "", 10);
      if (!Number.isInteger(first) || first < 0) throw new Error(`bad rank line: ${line.slice(0, 40)}`);
      const tokens = fields.slice(2);
      parsed.push({ first, tokens });
      count += tokens.length;
      maxRank = Math.max(maxRank, first + tokens.length - 1);
      for (const t of tokens) poolBytes += (t.length / 4) * 3;
    }
    this.size = count;
    this.maxRank = maxRank;
    this.pool = new Uint8Array(poolBytes);
    this.offsets = new Uint32Array(maxRank + 1);
    this.lengths = new Uint16Array(maxRank + 1);
    let cap = 1;
    while (cap < count * 2) cap <<= 1;
    this.slots = new Int32Array(cap);
    this.mask = cap - 1;
    this.pairRanks = new Int32Array(65536).fill(NO_RANK);
    this.byteRanks = new Int32Array(256).fill(NO_RANK);

    let at = 0;
    for (const { first, tokens } of parsed) {
      for (let k = 0; k < tokens.length; k++) {
        const rank = first + k;
        const len = decodeBase64Into(tokens[k], this.pool, at);
        if (this.lengths[rank] !== 0) throw new Error(`rank ${rank} listed twice`);
        this.offsets[rank] = at;
        this.lengths[rank] = len;
        this.insert(rank, at, len);
        if (len === 1) this.byteRanks[this.pool[at]] = rank;
        else if (len === 2) this.pairRanks[(this.pool[at] << 8) | this.pool[at + 1]] = rank;
        at += len;
      }
    }
    for (let b = 0; b < 256; b++) {
      if (this.byteRanks[b] === NO_RANK) throw new Error(`byte ${b} has no rank; not a byte-level BPE table`);
    }
  }

  private insert(rank: number, at: number, len: number): void {
    let slot = hashBytes(this.pool, at, at + len) & this.mask;
    for (;;) {
      const held = this.slots[slot];
      if (held === 0) {
        this.slots[slot] = rank + 1;
        return;
      }
      if (this.equals(held - 1, this.pool, at, at + len)) throw new Error(`duplicate token for ranks ${held - 1} and ${rank}`);
      slot = (slot + 1) & this.mask;
    }
  }

  private equals(rank: number, buf: Uint8Array, start: number, end: number): boolean {
    const len = end - start;
    if (this.lengths[rank] !== len) return false;
    const off = this.offsets[rank];
    const pool = this.pool;
    for (let k = 0; k < len; k++) if (pool[off + k] !== buf[start + k]) return false;
    return true;
  }

  /** Rank of the token whose bytes are buf[start..end), or NO_RANK. */
  get(buf: Uint8Array, start: number, end: number): number {
    const len = end - start;
    if (len === 2) return this.pairRanks[(buf[start] << 8) | buf[start + 1]];
    if (len === 1) return this.byteRanks[buf[start]];
    let slot = hashBytes(buf, start, end) & this.mask;
    for (;;) {
      const held = this.slots[slot];
      if (held === 0) return NO_RANK;
      if (this.equals(held - 1, buf, start, end)) return held - 1;
      slot = (slot + 1) & this.mask;
    }
  }

  /** Whether `rank` is a token of this table. */
  has(rank: number): boolean {
    return rank >= 0 && rank <= this.maxRank && this.lengths[rank] !== 0;
  }

  /** Bytes of `rank` (a view into the pool; do not modify). Call only when has(rank). */
  bytesOf(rank: number): Uint8Array {
    const off = this.offsets[rank];
    return this.pool.subarray(off, off + this.lengths[rank]);
  }

  /** Copies the bytes of `rank` into `out` at `at`; returns the new end. Call only when has(rank). */
  copyBytes(rank: number, out: Uint8Array, at: number): number {
    const off = this.offsets[rank];
    const len = this.lengths[rank];
    out.set(this.pool.subarray(off, off + len), at);
    return at + len;
  }

  /** Length in bytes of `rank` (0 when absent). */
  byteLength(rank: number): number {
    return rank >= 0 && rank <= this.maxRank ? this.lengths[rank] : 0;
  }
}

/** FNV-1a with a final avalanche, so the low bits used for the slot depend on every byte. */
function hashBytes(buf: Uint8Array, start: number, end: number): number {
  let h = 0x811c9dc5;
  for (let k = start; k < end; k++) h = Math.imul(h ^ buf[k], 0x01000193);
  h ^= h >>> 16;
  h = Math.imul(h, 0x7feb352d);
  h ^= h >>> 15;
  return h;
}

/** Decodes standard padded base64 `s` into `out` at `at`; returns the number of bytes written. */
function decodeBase64Into(s: string, out: Uint8Array, at: number): number {
  if (s.length % 4 !== 0) throw new Error(`bad base64 token ${JSON.stringify(s)}`);
  let w = at;
  for (let i = 0; i < s.length; i += 4) {
    const a = b64(s, i);
    const b = b64(s, i + 1);
    const c3 = s.charCodeAt(i + 2);
    const c4 = s.charCodeAt(i + 3);
    out[w++] = (a << 2) | (b >> 4);
    if (c3 === 61 /* = */) break;
    const c = b64(s, i + 2);
    out[w++] = ((b & 15) << 4) | (c >> 2);
    if (c4 === 61) break;
    out[w++] = ((c & 3) << 6) | b64(s, i + 3);
  }
  return w - at;
}

function b64(s: string, i: number): number {
  const code = s.charCodeAt(i);
  const v = code < 128 ? B64_VALUE[code] : -1;
  if (v < 0) throw new Error(`bad base64 character in ${JSON.stringify(s)}`);
  return v;
}
