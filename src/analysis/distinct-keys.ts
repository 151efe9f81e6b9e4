// Counts the distinct 64-bit keys of a stream in bounded memory: kept in memory while they fit a
// budget, otherwise spread over spill files by their low half (equal keys land in the same file),
// and each file counted alone. Counting is sorting (natively, as a BigUint64Array) and comparing
// neighbours, so it costs no hash table: 8 bytes a key, and the budget caps what is held at once.
import { closeSync, openSync, readSync, rmSync, writeSync } from "node:fs";
import { join } from "node:path";

const LE = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;
/** Index of the low and high 32-bit halves of 64-bit entry i in a Uint32Array view: 2i + LO, 2i + HI. */
export const LO = LE ? 0 : 1;
export const HI = LE ? 1 : 0;

/** Keys held at once by default: 16 Mi (128 MiB), which sorts in about a second. */
export const DISTINCT_BUDGET = 1 << 24;
/** Keys buffered per spill file before a write. */
const SPILL_BUFFER = 1 << 15;

/** Distinct keys among entries [0, n) of a sorted Uint32Array view of 64-bit entries. */
export function countSortedDistinct(w: Uint32Array, n: number): number {
  let d = n > 0 ? 1 : 0;
  for (let i = 1; i < n; i++) if (w[2 * i] !== w[2 * i - 2] || w[2 * i + 1] !== w[2 * i - 1]) d++;
  return d;
}

/**
 * Sorts the 64-bit keys of `w` (pairs of halves in this machine's layout, starting on an 8-byte
 * boundary) in place and moves each distinct key once to the front; returns that sorted prefix.
 */
export function sortUnique(w: Uint32Array): Uint32Array {
  const n = w.length / 2;
  if (n === 0) return w;
  new BigUint64Array(w.buffer, w.byteOffset, n).sort();
  let d = 1;
  for (let i = 1; i < n; i++)
    if (w[2 * i] !== w[2 * d - 2] || w[2 * i + 1] !== w[2 * d - 1]) {
      w[2 * d] = w[2 * i];
      w[2 * d + 1] = w[2 * i + 1];
      d++;
    }
  return w.subarray(0, 2 * d);
}

/** The spill file (of `files`) a key goes to, by its low half: equal keys meet in one file. */
export function spillOf(lo: number, files: number): number {
  return Math.floor((lo * files) / 4294967296);
}

/** Whether 64-bit key a (halves ahi, alo) sorts before key b, as unsigned numbers. */
function before(ahi: number, alo: number, bhi: number, blo: number): boolean {
  return ahi < bhi || (ahi === bhi && alo < blo);
}

/**
 * Calls `found(j)` for every entry j of `wanted` (sorted 64-bit keys, pairs of halves in this machine's
 * layout) that is among the first n entries of `sorted` (likewise): one merging pass, reading both in
 * order (a hash lookup per key of `sorted` would miss the caches at every key).
 */
export function mergeFind(sorted: Uint32Array, n: number, wanted: Uint32Array, found: (j: number) => void): void {
  const m = wanted.length / 2;
  let i = 0;
  for (let j = 0; j < m && i < n; j++) {
    const whi = wanted[2 * j + HI];
    const wlo = wanted[2 * j + LO];
    while (i < n && before(sorted[2 * i + HI], sorted[2 * i + LO], whi, wlo)) i++;
    if (i < n && sorted[2 * i + HI] === whi && sorted[2 * i + LO] === wlo) found(j);
  }
}

export class DistinctKeys {
  private readonly memory: Uint32Array | undefined;
  private used = 0;
  private readonly spills: { fd: number; path: string; buf: Uint32Array; used: number; keys: number }[] = [];
  private readonly spillBuffer: number;

  /** `total`: an upper bound on the keys that will be added (the size of what is read). */
  constructor(total: number, tmpDir: string, budget = DISTINCT_BUDGET) {
    this.spillBuffer = Math.max(1, Math.min(SPILL_BUFFER, budget));
    if (total <= budget) {
      this.memory = new Uint32Array(2 * total);
      return;
    }
    // Twice as many files as needed on average, so the unevenness of a hash split stays within the budget.
    const files = Math.ceil((2 * total) / budget);
    for (let s = 0; s < files; s++) {
      const path = join(tmpDir, `distinct-${s}.bin`);
      this.spills.push({ fd: openSync(path, "w+"), path, buf: new Uint32Array(2 * this.spillBuffer), used: 0, keys: 0 });
    }
  }

  /** Adds the keys in `words` (pairs of 32-bit halves, in this machine's 64-bit layout). */
  add(words: Uint32Array): void {
    if (this.memory) {
      this.memory.set(words, 2 * this.used);
      this.used += words.length / 2;
      return;
    }
    const n = this.spills.length;
    for (let i = 0; i < words.length; i += 2) {
      const s = this.spills[spillOf(words[i + LO], n)];
      s.buf[2 * s.used] = words[i];
      s.buf[2 * s.used + 1] = words[i + 1];
      if (++s.used === this.spillBuffer) this.drain(s);
    }
  }

  private drain(s: (typeof this.spills)[number]): void {
    const b = new Uint8Array(s.buf.buffer, 0, s.used * 8);
    let off = 0;
    while (off < b.length) off += writeSync(s.fd, b, off, b.length - off);
    s.keys += s.used;
    s.used = 0;
  }

  /** Files the keys are spread over by their low half (spillOf), or 0 when they are held in memory. */
  get spillFiles(): number {
    return this.spills.length;
  }

  /**
   * The number of distinct keys added; removes the spill files. `visit` (optional) sees the keys
   * sorted, once per spill file (`spill`: its number, see spillOf) or once for all (spill −1).
   */
  count(visit?: (sorted: Uint32Array, n: number, spill: number) => void): number {
    if (this.memory) {
      new BigUint64Array(this.memory.buffer, 0, this.used).sort();
      visit?.(this.memory, this.used, -1);
      return countSortedDistinct(this.memory, this.used);
    }
    let d = 0;
    try {
      for (const [index, s] of this.spills.entries()) {
        this.drain(s);
        const w = new Uint32Array(2 * s.keys);
        const b = new Uint8Array(w.buffer);
        let got = 0;
        while (got < b.length) {
          const n = readSync(s.fd, b, got, b.length - got, got);
          if (n === 0) throw new Error("overlap: a spill of train keys ended early");
          got += n;
        }
        new BigUint64Array(w.buffer).sort();
        visit?.(w, s.keys, index);
        d += countSortedDistinct(w, s.keys);
      }
    } finally {
      this.close();
    }
    return d;
  }

  close(): void {
    for (const s of this.spills.splice(0)) {
      closeSync(s.fd);
      rmSync(s.path, { force: true });
    }
  }
}
