// Resuming after a crash, and the per-file cache: a build killed with SIGKILL at several points
// and run again gives the same bytes as a clean build; changed settings redo only what they affect.
import { beforeAll, describe, expect, it } from "vitest";
import { existsSync, readFileSync, writeFileSync, readdirSync } from "node:fs";
import { join } from "node:path";
import { demoCopy, outputFiles, siftpack } from "./cli.js";

let clean: Record<string, string>;

beforeAll(() => {
  const dir = demoCopy();
  const r = siftpack(["run", join(dir, "pipelines/demo.yaml"), "--no-cache"]);
  expect(r.code).toBe(0);
  clean = outputFiles(join(dir, "build/demo"));
});

describe("resume after SIGKILL", () => {
  // A crash point and the phase it kills the build in (its phases before it finished, it did not):
  // read:N — after the N-th batch of the read phase; unit-records:N — when a pass takes its N-th
  // record (pass-2 first, which only collects); partition:N — as the N-th partition step starts (ids, exact-dups,
  // buckets: the third); records:N — when the N-th record reaches the packer (pack);
  // write:N — between the header and the body of the N-th output file written (a shard
  // half-written in a packing group's directory); assemble:N — as the N-th shard file is moved into
  // the staging directory.
  const cases: [string, string][] = [
    ["read:3", "read"],
    ["unit-records:100", "pass-2"],
    ["partition:3", "buckets"],
    ["records:40", "pack"],
    ["records:300", "pack"],
    ["write:2", "pack"],
    ["write:7", "pack"],
    ["assemble:3", "assemble"],
  ];
  for (const [at, phase] of cases) {
    it(`killed at ${at} (in ${phase}), then run again: identical to a clean build`, () => {
      const dir = demoCopy();
      const pipeline = join(dir, "pipelines/demo.yaml");
      const killed = siftpack(["run", pipeline], { env: { SIFTPACK_CRASH_AT: at } });
      expect(killed.signal).toBe("SIGKILL");
      expect(existsSync(join(dir, "build/demo/manifest.json"))).toBe(false);
      // The kill left the work directory: the phase named was under way and not finished.
      const work = join(dir, "build/.demo.run");
      expect(existsSync(join(work, phase, "task-0.started.json")), `${phase} started`).toBe(true);
      expect(existsSync(join(work, phase, "task-0.done.json")), `${phase} not finished`).toBe(false);
      const again = siftpack(["run", pipeline, "--json"]);
      expect(again.code).toBe(0);
      const report = JSON.parse(again.stdout).cache;
      // Files finished before the crash were not read again.
      if (at === "records:300") expect(report.read.reused).toBeGreaterThan(0);
      expect(outputFiles(join(dir, "build/demo"))).toEqual(clean);
      expect(siftpack(["verify", join(dir, "build/demo")]).code).toBe(0);
      // No temporary or partial file is left behind once a build completes.
      expect(readdirSync(join(dir, "build")).filter((f) => f.includes("partial"))).toEqual([]);
      expect(readdirSync(join(dir, "build/.demo.cache")).filter((f) => f.endsWith(".tmp"))).toEqual([]);
    });
  }
});

describe("the cache", () => {
  const dir = demoCopy();
  const pipeline = join(dir, "pipelines/demo.yaml");
  // --force: these tests are about the per-file cache, which a build skipped as up to date never consults.
  const run = () => {
    const r = siftpack(["run", pipeline, "--json", "--force"]);
    expect(r.code).toBe(0);
    return JSON.parse(r.stdout).cache;
  };
  const edit = (from: RegExp, to: string) => {
    const text = readFileSync(pipeline, "utf8");
    expect(text).toMatch(from);
    writeFileSync(pipeline, text.replace(from, to));
  };

  it("reuses every unit on an unchanged rebuild", () => {
    const first = run();
    expect(first.read.reused).toBe(0);
    expect(first.tokens.records_computed).toBeGreaterThan(0);
    expect(first.steps.reused).toBe(0);
    const second = run();
    expect(second.read).toEqual({ reused: first.read.computed, computed: 0 });
    // Every later step (a unit through a pass, a packing group) comes whole from the cache: no record is tokenized, none even looked up.
    expect(second.steps).toEqual({ reused: first.steps.computed, computed: 0 });
    expect(second.tokens.computed).toBe(0);
    expect(second.tokens.records_computed).toBe(0);
  });

  it("a new block length redoes only packing: reading and token ids come from the cache", () => {
    edit(/length: \d+/, "length: 256");
    const c = run();
    expect(c.read.computed).toBe(0);
    expect(c.tokens.computed).toBe(0);
    expect(c.tokens.records_computed).toBe(0);
  });

  it("a new normalization form redoes reading, and tokenizes again only the texts it changed", () => {
    edit(/form: NFKC/, "form: NFC");
    const c = run();
    expect(c.read.reused).toBe(0);
    // The demo has a few texts that NFKC and NFC normalize differently (fullwidth digits, ligatures).
    expect(c.tokens.records_computed).toBeGreaterThan(0);
    expect(c.tokens.records_reused).toBeGreaterThan(10 * c.tokens.records_computed);
  });

  it("a changed input file redoes only that file", () => {
    run();
    const manual = join(dir, "sample-data/manuals/MN-04-brake-pad-replacement.txt");
    writeFileSync(manual, readFileSync(manual, "utf8") + "\nAddendum: after fitting new pads, run the brake test twice on the depot test track before release.\n");
    const c = run();
    expect(c.read.computed).toBe(1);
    expect(c.read.reused).toBeGreaterThan(1);
    expect(c.tokens.records_computed).toBeGreaterThan(0);
    expect(c.tokens.records_computed).toBeLessThan(5);
  });

  it("--no-cache recomputes everything", () => {
    const r = siftpack(["run", pipeline, "--json", "--no-cache"]);
    expect(JSON.parse(r.stdout).cache.read.reused).toBe(0);
  });
});
