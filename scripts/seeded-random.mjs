// mulberry32: a 32-bit state is plenty for a few thousand draws, and the function is short enough
// to keep here, so the sample data never depends on a library's version. Shared by the scripts
// that write sample-data/.
export function mulberry32(seed) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
