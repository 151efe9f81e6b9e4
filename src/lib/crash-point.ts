// Deliberate crashes for the resume tests: SIFTPACK_CRASH_AT="NAME:N" kills the process with SIGKILL
// the N-th time point NAME is passed. Points: read (a batch of the read phase written), unit-records
// (a record written by a pass or whole phase), partition (a keyed partition step starts), resolve
// (a resolve step starts), whole (a record leaves a whole-stream phase), records (a record reaches
// the packer in assemble), write (between the first and the rest of an output file's parts).
// "NAME:N:throw" throws an error there instead (a failed write, for the tests of failures). Unset
// (always, outside those tests) it costs one comparison.
const at = process.env.SIFTPACK_CRASH_AT;
const counts = new Map<string, number>();

export function crashPoint(name: string): void {
  if (at === undefined) return;
  const n = (counts.get(name) ?? 0) + 1;
  counts.set(name, n);
  if (at === `${name}:${n}`) process.kill(process.pid, "SIGKILL");
  if (at === `${name}:${n}:throw`) throw new Error(`injected failure at ${name}:${n}`);
}

const failOn = process.env.SIFTPACK_FAIL_ON_RECORD;

/** For the worker tests: SIFTPACK_FAIL_ON_RECORD="T-7" makes the per-record stages throw on record T-7. */
export function failPoint(recordId: string): void {
  if (failOn !== undefined && failOn === recordId) throw new Error(`injected failure on record ${recordId}`);
}
