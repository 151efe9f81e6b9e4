// A rebuild with nothing changed is answered from hashes: the build is left as it is; anything that
// changes what would be built (an input's bytes, an added input, a setting, a protected file, a
// missing output file, --force) builds again.
import { describe, expect, it } from "vitest";
import { appendFileSync, readdirSync, readFileSync, rmSync, statSync, utimesSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { demoCopy, siftpack } from "./cli.js";

const UP = /^up to date: the same (\d+) input files(?: \((\d+) touched, same bytes\))?, settings and siftpack as this build; nothing rebuilt/m;

function built(dir: string, extra: string[] = []) {
  // Log level info: the reason for building is an info line.
  const r = siftpack(["run", "pipelines/demo.yaml", ...extra], { cwd: dir, env: { SIFTPACK_LOG: "info" } });
  expect(r.code, r.stderr).toBe(0);
  return r;
}

const manifestTime = (dir: string) => statSync(join(dir, "build/demo/manifest.json")).mtimeMs;

describe("run when nothing changed", () => {
  it("says the build is up to date and leaves it; a touched input with the same bytes too, once hashed", () => {
    const dir = demoCopy();
    const first = built(dir);
    expect(first.stdout).not.toMatch(UP);
    const stamp = manifestTime(dir);
    const again = built(dir);
    expect(again.stdout).toMatch(UP);
    expect(again.stdout).toContain("train "); // the summary table of the build as it is
    expect(manifestTime(dir)).toBe(stamp);
    // A copy back in place (new time, same bytes) is hashed once, then recognised by its time.
    const input = join(dir, "sample-data/notes/shift-notes.csv");
    utimesSync(input, new Date(), new Date(Date.now() + 5000));
    expect(UP.exec(built(dir).stdout)?.[2]).toBe("1");
    expect(UP.exec(built(dir).stdout)?.[2]).toBeUndefined();
    expect(manifestTime(dir)).toBe(stamp);
    // --json says it too, with the cache folder's size (also on the summary's cache line).
    const json = JSON.parse(built(dir, ["--json"]).stdout);
    expect(json.up_to_date).toBe(true);
    const cacheDir = join(dir, "build/.demo.cache");
    const names = readdirSync(cacheDir);
    // A file kept under several names (a piece of the overlap material and its group) counts once.
    const files = new Map(names.map((n) => statSync(join(cacheDir, n))).map((st) => [`${st.dev}:${st.ino}`, st.size]));
    expect(files.size).toBeLessThan(names.length);
    expect(json.cache.size).toEqual({ entries: names.length, bytes: [...files.values()].reduce((a, b) => a + b, 0), removed: 0 });
    expect(again.stdout).toMatch(new RegExp(`^cache: ${names.length} entries, [\\d.]+ [kM]B in build/\\.demo\\.cache$`, "m"));
  });

  it("keeps in the cache what the last build used: entries of other settings are removed and counted", () => {
    const dir = demoCopy();
    built(dir);
    writeFileSync(join(dir, "pipelines/demo.yaml"), readFileSync(join(dir, "pipelines/demo.yaml"), "utf8").replace("form: NFKC", "form: NFC"));
    const json = JSON.parse(built(dir, ["--json"]).stdout);
    expect(json.up_to_date).toBe(false);
    // Reading is keyed by the normalization form: every read entry of the NFKC build went.
    expect(json.cache.size.removed).toBeGreaterThanOrEqual(json.cache.read.computed);
    expect(json.cache.size.entries).toBe(readdirSync(join(dir, "build/.demo.cache")).length);
  });

  it("builds again when an input's bytes, the inputs, a setting, a protected file or an output file changed, or with --force", () => {
    const dir = demoCopy();
    built(dir);
    const rebuilt = (why: RegExp, extra: string[] = []) => {
      const r = built(dir, extra);
      expect(r.stdout).not.toMatch(UP);
      if (why.source !== "(?:)") expect(r.stderr).toMatch(why);
      expect(built(dir).stdout).toMatch(UP); // and the new build is up to date in turn
    };
    // Same size, other bytes: the time changed, so the hash decides.
    const notes = join(dir, "sample-data/notes/shift-notes.csv");
    const text = readFileSync(notes, "utf8");
    expect(text).toContain("pit lamps");
    writeFileSync(notes, text.replace("pit lamps", "pit Lamps"));
    rebuilt(/input changed: .*shift-notes\.csv/);
    writeFileSync(join(dir, "sample-data/manuals/MN-09-coupler-check.txt"), "Coupler check. The yard crew checks every coupler head, its locking pin and the air hoses before the first run of the day, and writes the car number in the shift book.\n");
    rebuilt(/input added|input files now/);
    writeFileSync(join(dir, "pipelines/demo.yaml"), readFileSync(join(dir, "pipelines/demo.yaml"), "utf8").replace("seed: 7", "seed: 8"));
    rebuilt(/settings changed/);
    appendFileSync(join(dir, "sample-data/protected/eval-passages.txt"), "\n\nThe yard crew checks every coupler before the first run of the day.\n");
    rebuilt(/eval-passages\.txt changed/);
    rmSync(join(dir, "build/demo/ledger.jsonl.gz"));
    rebuilt(/ledger\.jsonl\.gz is missing/);
    rebuilt(/(?:)/, ["--force"]);
  });

  it("run --lock --check answers from the hashes without building", () => {
    const dir = demoCopy();
    built(dir, ["--lock", "demo.lock"]);
    const stamp = manifestTime(dir);
    const check = built(dir, ["--lock", "demo.lock", "--check"]);
    expect(check.stdout).toMatch(UP);
    expect(check.stdout).toContain("lock demo.lock: the build matches");
    expect(manifestTime(dir)).toBe(stamp);
  });
});
