// The held-out keys of one overlap partition, numbered: each distinct key gets a number, and the
// distinct keys come out sorted, each with its number, to be looked for among train's sorted keys.
//
// One hash table of a partition's ~2 million entries misses the caches at nearly every entry (the
// cost of the partition step's held-out side). So the entries are first split by the top byte of
// their key (a counting pass, writing to 256 places in order), and each part gets a table of its
// own, small enough to stay in the caches while its keys go in; its distinct keys are sorted there
// too. Parts are in key order, so the sorted parts end to end are all distinct keys sorted.
import { HashMap64 } from "../overlap/hash-map64.js";
import { HI, LO, spillOf } from "./distinct-keys.js";

const PARTS = 256;

export interface HeldKeys {
  /** Distinct keys. */
  distinct: number;
  /** Per entry, its key's number. */
  keyOf: Int32Array;
  /** The distinct keys sorted as 64-bit numbers (pairs of halves in this machine's layout), and the number of each. */
  sorted: Uint32Array;
  numberOf: Int32Array;
}

/** Numbers the keys of the entries of `runs`: `stride` uint32s an entry, the key's high half first, then its low half. */
export function numberKeys(runs: Uint32Array[], stride: number): HeldKeys {
  let n = 0;
  for (const w of runs) n += Math.floor(w.length / stride);
  const start = new Float64Array(PARTS + 1);
  for (const w of runs) for (let x = 0; x + stride <= w.length; x += stride) start[(w[x] >>> 24) + 1]++;
  for (let b = 0; b < PARTS; b++) start[b + 1] += start[b];
  const at = start.slice(0, PARTS);
  const khi = new Uint32Array(n);
  const klo = new Uint32Array(n);
  const entry = new Uint32Array(n);
  let e = 0;
  for (const w of runs)
    for (let x = 0; x + stride <= w.length; x += stride, e++) {
      const i = at[w[x] >>> 24]++;
      khi[i] = w[x];
      klo[i] = w[x + 1];
      entry[i] = e;
    }
  const keyOf = new Int32Array(n);
  const sorted = new Uint32Array(2 * n);
  const numberOf = new Int32Array(n);
  let distinct = 0;
  let largest = 0;
  for (let b = 0; b < PARTS; b++) largest = Math.max(largest, start[b + 1] - start[b]);
  // One table for every part in turn, emptied between them: no table of its own to allocate per part.
  const map = new HashMap64(Math.max(16, largest));
  for (let b = 0; b < PARTS; b++) {
    const from = start[b];
    const to = start[b + 1];
    if (from === to) continue;
    map.clear();
    let local = 0;
    for (let i = from; i < to; i++) {
      const k = map.setIfAbsent(khi[i], klo[i], local);
      if (k === local) local++;
      keyOf[entry[i]] = distinct + k;
    }
    const part = new Uint32Array(2 * local);
    let w = 0;
    map.forEach((hi, lo) => {
      part[w + HI] = hi;
      part[w + LO] = lo;
      w += 2;
    });
    new BigUint64Array(part.buffer).sort();
    sorted.set(part, 2 * distinct);
    for (let j = 0; j < local; j++) numberOf[distinct + j] = distinct + map.get(part[2 * j + HI], part[2 * j + LO]);
    distinct += local;
  }
  return { distinct, keyOf, sorted: sorted.subarray(0, 2 * distinct), numberOf: numberOf.subarray(0, distinct) };
}

/**
 * The sorted keys split by the spill file each goes to (spillOf of its low half, as DistinctKeys
 * spreads train's keys), key order kept within each, with their numbers; one list when it spills not.
 */
export function bySpill(keys: HeldKeys, spills: number): { sorted: Uint32Array; numberOf: Int32Array }[] {
  if (spills === 0) return [{ sorted: keys.sorted, numberOf: keys.numberOf }];
  const count = new Float64Array(spills);
  for (let j = 0; j < keys.distinct; j++) count[spillOf(keys.sorted[2 * j + LO], spills)]++;
  const lists = Array.from(count, (c) => ({ sorted: new Uint32Array(2 * c), numberOf: new Int32Array(c), n: 0 }));
  for (let j = 0; j < keys.distinct; j++) {
    const l = lists[spillOf(keys.sorted[2 * j + LO], spills)];
    l.sorted[2 * l.n] = keys.sorted[2 * j];
    l.sorted[2 * l.n + 1] = keys.sorted[2 * j + 1];
    l.numberOf[l.n++] = keys.numberOf[j];
  }
  return lists;
}
