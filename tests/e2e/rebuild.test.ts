// Rebuilding in CI: identical bytes, verify --inputs, the lock check, and a full disk.
import { describe, expect, it } from "vitest";
import { readFileSync, writeFileSync, existsSync } from "node:fs";
import { join } from "node:path";
import { blocksOf, demoCopy, outputFiles, siftpack, tempDir, tmpfsForSuite } from "./cli.js";

describe("identical bytes", () => {
  it("across reruns, worker counts and the order files were created in", () => {
    const a = demoCopy("forward");
    const b = demoCopy("reverse");
    expect(siftpack(["run", join(a, "pipelines/demo.yaml"), "--workers", "1"]).code).toBe(0);
    expect(siftpack(["run", join(b, "pipelines/demo.yaml"), "--workers", "2"]).code).toBe(0);
    const fa = outputFiles(join(a, "build/demo"));
    const fb = outputFiles(join(b, "build/demo"));
    expect(Object.keys(fa).sort()).toEqual(Object.keys(fb).sort());
    for (const k of Object.keys(fa)) expect(fb[k], k).toBe(fa[k]);
    // build-info.json holds the paths and times, kept out of the hashed files.
    const info = JSON.parse(readFileSync(join(a, "build/demo/build-info.json"), "utf8"));
    expect(info.base_dir).toBe(join(a, "pipelines"));
  });
});

describe("verify --inputs and the lock check", () => {
  const dir = demoCopy("forward");
  const pipeline = join(dir, "pipelines/demo.yaml");
  const lock = join(dir, "siftpack.lock.json");

  it("writes the lock on the first run and passes --check on an unchanged rebuild", () => {
    const first = siftpack(["run", pipeline, "--lock", lock]);
    expect(first.code).toBe(0);
    expect(first.stdout).toMatch(/lock .*siftpack\.lock\.json written \(build [0-9a-f]{16}\)/);
    const again = siftpack(["run", pipeline, "--lock", lock, "--check"]);
    expect(again.code).toBe(0);
    expect(again.stdout).toMatch(/the build matches/);
    expect(siftpack(["verify", join(dir, "build/demo"), "--inputs"]).stdout).toMatch(/^ok: \d+ files and 12 inputs match/);
  });

  it("names a changed input and the split counts that moved", () => {
    // A held-out manual: train's tokens are fixed by the mixture's budget, a held-out split's follow its texts.
    const manual = join(dir, "sample-data/manuals/MN-08-depot-overhead-line-isolation.txt");
    writeFileSync(manual, readFileSync(manual, "utf8") + "\nAddendum: after isolating the section, fit the earthing poles at both ends before anyone climbs.\n");
    const v = siftpack(["verify", join(dir, "build/demo"), "--inputs"]);
    expect(v.code).toBe(1);
    expect(v.stderr).toMatch(/input \.\.\/sample-data\/manuals\/MN-08-depot-overhead-line-isolation\.txt \(source manuals\): changed: \d+ bytes/);
    const check = siftpack(["run", pipeline, "--lock", lock, "--check"]);
    expect(check.code).toBe(1);
    expect(check.stderr).toMatch(/^siftpack: error: the build differs from .*siftpack\.lock\.json in \d+ ways/);
    expect(check.stderr).toMatch(/input changed: \.\.\/sample-data\/manuals\/MN-08-depot-overhead-line-isolation\.txt \(source manuals\)/);
    expect(check.stderr).toMatch(/split val: tokens \d+ → \d+ \(\+\d+\)/);
    expect(check.stderr).toMatch(/build_hash: [0-9a-f]{16} → [0-9a-f]{16}/);
  });

  it("--check without a lock file is an error, and --check alone is a usage error", () => {
    expect(siftpack(["run", pipeline, "--lock", join(dir, "none.json"), "--check"]).code).toBe(1);
    expect(siftpack(["run", pipeline, "--check"]).code).toBe(2);
  });
});


describe("a full disk", () => {
  // A disk with room for one build and its cache, but not for a second build beside the first.
  const probe = tempDir("probe");
  // --keep-work: the phases' files count too, as they do at a build's peak.
  siftpack(["run", "pipelines/demo.yaml", "--out", join(probe, "demo"), "--keep-work"]);
  const kib = 4 * (blocksOf(probe) + 16);
  const mnt = tempDir("full");
  const mounted = tmpfsForSuite(mnt, `${kib}k`);

  // Needs root to mount a small tmpfs (true on the developers' machines and in CI here).
  it.runIf(mounted)("fails with a clear message and leaves the previous build intact", () => {
    const out = join(mnt, "demo");
    const first = siftpack(["run", "pipelines/demo.yaml", "--out", out]);
    expect(first.code).toBe(0);
    const before = outputFiles(out);
    // --no-cache: every unit is computed again (a cache hit only adds a second name for a file).
    const second = siftpack(["run", "pipelines/demo.yaml", "--out", out, "--no-cache"]);
    expect(second.code).toBe(1);
    expect(second.stderr).toMatch(/^siftpack: error: .*no space left on device; free some space there, or build elsewhere with --out\n$/);
    expect(outputFiles(out)).toEqual(before);
    expect(siftpack(["verify", out]).code).toBe(0);
    // The failed build's half-written staging folder is removed (freeing the space); the cache stays.
    expect(existsSync(join(mnt, ".demo.partial"))).toBe(false);
    expect(existsSync(join(mnt, ".demo.cache"))).toBe(true);
  });
});
