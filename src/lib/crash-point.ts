// Deliberate crashes for the resume tests: SIFTPACK_CRASH_AT="records:120" kills the process with
// SIGKILL when the 120th record reaches the packer, "write:3" in the middle of the third output
// file written. Unset (always, outside those tests) it costs one comparison.
const at = process.env.SIFTPACK_CRASH_AT;
const counts = new Map<string, number>();

export function crashPoint(name: string): void {
  if (at === undefined) return;
  const n = (counts.get(name) ?? 0) + 1;
  counts.set(name, n);
  if (at === `${name}:${n}`) process.kill(process.pid, "SIGKILL");
}
