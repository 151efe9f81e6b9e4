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

const failOn = process.env.SIFTPACK_FAIL_ON_RECORD;

/** For the worker tests: SIFTPACK_FAIL_ON_RECORD="T-7" makes the per-record stages throw on record T-7. */
export function failPoint(recordId: string): void {
  if (failOn !== undefined && failOn === recordId) throw new Error(`injected failure on record ${recordId}`);
}
