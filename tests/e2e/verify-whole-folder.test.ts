// `siftpack verify` checks the whole build directory: a file the manifest does not list is named,
// and the manifest's own figures are covered by manifest_xxh64, which an edit cannot match.
import { cpSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { siftpack, tempDir } from "./cli.js";
import { manifestHash, type Manifest } from "../../src/output/manifest.js";
import { loadHasher } from "../../src/lib/hash.js";

let out: string;
let manifestText: string;

/** A fresh copy of the demo build to damage. */
function copy(name: string): string {
  const dir = join(tempDir(`verify-${name}`), "demo");
  cpSync(out, dir, { recursive: true });
  return dir;
}

beforeAll(async () => {
  out = join(tempDir("verify-whole"), "demo");
  const run = siftpack(["run", "pipelines/demo.yaml", "--out", out, "--quiet"]);
  expect(run.code, run.stderr).toBe(0);
  manifestText = readFileSync(join(out, "manifest.json"), "utf8");
  await loadHasher();
});

describe("verify checks the whole build directory", () => {
  it("passes on a fresh build, and on one with the report that siftpack report writes there", () => {
    expect(siftpack(["verify", out]).code).toBe(0);
    const dir = copy("report");
    expect(siftpack(["report", dir, "--out", join(dir, "report.html"), "--no-excerpts"]).code).toBe(0);
    const v = siftpack(["verify", dir]);
    expect(v.code, v.stderr).toBe(0);
    expect(v.stdout).toMatch(/^ok: \d+ files match the manifest/);
  });

  it("names an extra .npy in train/ and exits 1", () => {
    const dir = copy("extra");
    const m: Manifest = JSON.parse(manifestText);
    cpSync(join(dir, m.splits.train.shards[0].tokens), join(dir, "train/99999-000000.tokens.npy"));
    writeFileSync(join(dir, "notes.txt"), "depot handover notes");
    const v = siftpack(["verify", dir]);
    expect(v.code).toBe(1);
    expect(v.stderr.split("\n")).toEqual([
      `siftpack: error: ${dir}: 2 files are not in the manifest`,
      "  notes.txt: not in the manifest: a file the build did not write",
      "  train/99999-000000.tokens.npy: not in the manifest: a file the build did not write",
      "",
    ]);
    const json = JSON.parse(siftpack(["verify", dir, "--json"]).stdout);
    expect(json).toMatchObject({ ok: false, unlisted: 2 });
    expect(json.problems.map((p: { path: string }) => p.path)).toEqual(["notes.txt", "train/99999-000000.tokens.npy"]);
  });

  it("a report.html that siftpack did not write is not one of its own files", () => {
    const dir = copy("fake-report");
    writeFileSync(join(dir, "report.html"), "<!doctype html><title>depot rota</title>");
    const v = siftpack(["verify", dir]);
    expect(v.code).toBe(1);
    expect(v.stderr).toContain("  report.html: not in the manifest");
  });

  it("names manifest.json when a count in it is edited, and exits 1", () => {
    const dir = copy("count");
    const edited = manifestText.replace(/"kept": (\d+)/, (_, n) => `"kept": ${Number(n) + 1}`);
    expect(edited).not.toBe(manifestText);
    writeFileSync(join(dir, "manifest.json"), edited);
    const v = siftpack(["verify", dir]);
    expect(v.code).toBe(1);
    expect(v.stderr).toMatch(/^siftpack: error: .*: 1 of \d+ files do not match the manifest\n {2}manifest\.json: edited since the build: its content hashes to [0-9a-f]{16}, manifest_xxh64 says [0-9a-f]{16}\n$/);
  });

  it("names manifest.json when its hash is removed; a re-indented manifest still passes", () => {
    const m = JSON.parse(manifestText);
    const dir = copy("nohash");
    delete m.manifest_xxh64;
    writeFileSync(join(dir, "manifest.json"), JSON.stringify(m));
    const v = siftpack(["verify", dir]);
    expect(v.code).toBe(1);
    expect(v.stderr).toContain("manifest.json: has no manifest_xxh64");
    // The hash is over the canonical JSON: layout and key order do not matter, content does.
    writeFileSync(join(dir, "manifest.json"), JSON.stringify(JSON.parse(manifestText)));
    expect(siftpack(["verify", dir]).code).toBe(0);
  });

  it("manifest_xxh64 is the hash of the manifest without it, and the same for any number of workers", () => {
    const m = JSON.parse(manifestText);
    expect(m.manifest_xxh64).toBe(manifestHash(m));
    const again = join(tempDir("verify-w1"), "demo");
    expect(siftpack(["run", "pipelines/demo.yaml", "--out", again, "--workers", "1", "--no-cache", "--quiet"]).code).toBe(0);
    expect(readFileSync(join(again, "manifest.json"), "utf8")).toBe(manifestText);
    rmSync(again, { recursive: true, force: true });
  });
});
