// Many small Uint32Arrays (a record's token ids) cut from shared slabs: one allocation outside V8's
// heap per slab instead of one per array, since such memory counts towards full collections. Each
// array is a view of its own range of a slab (its `.buffer` is the slab: use byteOffset and
// byteLength); a slab lives as long as any array cut from it.

const SLAB = 1 << 20;
let slab = new Uint32Array(0);
let at = 0;

/** An array of n ids the caller owns (zero-filled: slabs are new memory, never reused); large ones get memory of their own. */
export function u32Array(n: number): Uint32Array {
  if (n > SLAB / 4) return new Uint32Array(n);
  if (at + n > slab.length) {
    slab = new Uint32Array(SLAB);
    at = 0;
  }
  const out = slab.subarray(at, at + n);
  at += n;
  return out;
}
