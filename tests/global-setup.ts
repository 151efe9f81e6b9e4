// Every temporary folder of a test run — the tests' own and those of the siftpack processes and
// threads they start, all made under os.tmpdir() — goes under one folder of this run, removed when
// the run ends: tests that leave theirs behind once filled this machine's disk over many runs.
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

export default function setup(): () => void {
  const dir = mkdtempSync(join(tmpdir(), "siftpack-tests-"));
  const before = process.env.TMPDIR;
  // Read by os.tmpdir() at each call, and inherited by the test workers started after this.
  process.env.TMPDIR = dir;
  return () => {
    try {
      rmSync(dir, { recursive: true, force: true });
    } catch (err) {
      // A mount a test left inside (it is busy): said, not a failure of the run.
      console.warn(`could not remove the tests' temporary folder ${dir}: ${(err as Error).message}`);
    }
    if (before === undefined) delete process.env.TMPDIR;
    else process.env.TMPDIR = before;
  };
}
