// Rebuilds after a change reuse the steps the change does not reach (a unit through a pass, a
// packing group; src/engine/step-memo.ts) and give the bytes of a clean build: files added,
// removed and changed, a setting changed, and a cache entry edited behind siftpack's back. The demo
// pipeline has every stage that decides over the whole corpus (exact and near-duplicates, repeated
// lines, group split, decontamination, the mixture, the overlap figures); its packing groups are
// made small so that a change leaves some of them as they were.
import { describe, expect, it } from "vitest";
import { readdirSync, readFileSync, rmSync, statSync, utimesSync, writeFileSync } from "node:fs";
import { gunzipSync, gzipSync } from "node:zlib";
import { join } from "node:path";
import { demoCopy, outputFiles, siftpack } from "./cli.js";

// Task threads even for the demo's small input, so the threads' cache reports are joined too.
const env = { SIFTPACK_TASK_THREADS_FROM_MB: "0" };

function setup() {
  const dir = demoCopy();
  const pipeline = join(dir, "pipelines/demo.yaml");
  const text = readFileSync(pipeline, "utf8");
  writeFileSync(pipeline, text.replace(/^( {2}- pack: \{ length: 512, strategy: best-fit,)/m, "$1 group_mb: 0.03,"));
  expect(readFileSync(pipeline, "utf8")).toContain("group_mb: 0.03");
  const run = (...extra: string[]) => {
    const r = siftpack(["run", pipeline, "--json", "--quiet", "--workers", "2", ...extra], { env });
    expect(r.code, r.stderr).toBe(0);
    return { steps: JSON.parse(r.stdout).cache.steps as { reused: number; computed: number }, stderr: r.stderr };
  };
  /** The bytes a build without any cache makes of the inputs as they are now. */
  const clean = () => {
    const out = join(dir, "build/clean");
    rmSync(out, { recursive: true, force: true });
    const r = siftpack(["run", pipeline, "--out", out, "--no-cache", "--quiet", "--workers", "1"]);
    expect(r.code, r.stderr).toBe(0);
    return outputFiles(out);
  };
  return { dir, pipeline, run, clean, built: () => outputFiles(join(dir, "build/demo")) };
}

/**
 * Invented tickets of a new year at the tram depots; with `echo`, the body of an earlier ticket
 * twice more, once as it was and once with a word changed: decisions of the exact and near-duplicate
 * steps about earlier files' records come into play.
 */
function newTickets(n: number, echo?: string): Buffer {
  const faults = ["a door that would not close at the terminus", "a pantograph that dropped twice on the viaduct", "a sander that kept running after the car stopped", "a saloon heater that smelled of burning dust"];
  const lines = [];
  for (let i = 0; i < n; i++)
    lines.push(
      JSON.stringify({
        ticket_id: `T-2027-${String(i + 1).padStart(4, "0")}`,
        depot: ["Fennick Road", "Millbrook Yard", "Saltings"][i % 3],
        year: 2027,
        body: `Car ${7100 + i} came back to the depot with ${faults[i % faults.length]}. The night fitter ${["traced it to a loose plug", "replaced the relay", "adjusted the limit switch", "cleaned the contacts"][(i * 7) % 4]} and ran ${3 + (i % 5)} test cycles before the car went back out on route ${i % 9}.`,
      }),
    );
  if (echo) for (const [k, body] of [echo, echo.replace(/\bthe\b/, "that")].entries()) lines.push(JSON.stringify({ ticket_id: `T-2027-E${k}`, depot: "Saltings", year: 2027, body }));
  return gzipSync(lines.join("\n") + "\n");
}

/** The files the cache keeps for steps: each entry's files (step-<key>.<n>), with their paths in the work directory. */
function keptFiles(cache: string): { key: string; blob: string; path: string; size: number }[] {
  const out = [];
  for (const n of readdirSync(cache)) {
    const m = /^step-([0-9a-f]{16})\.json$/.exec(n);
    if (!m) continue;
    const index = JSON.parse(readFileSync(join(cache, n), "utf8")) as { files: { path: string; size: number }[] };
    for (const [i, f] of index.files.entries()) out.push({ key: m[1], blob: `step-${m[1]}.${i}`, path: f.path, size: f.size });
  }
  return out;
}

describe("a rebuild reuses what a change does not reach, and builds the bytes of a clean build", () => {
  it("after files are added, changed and removed, and after a setting changes", () => {
    const { dir, pipeline, run, clean, built } = setup();
    const first = run();
    expect(first.steps.reused).toBe(0);
    expect(first.steps.computed).toBeGreaterThan(20);

    // A new file of tickets: it sorts last, so the units before it keep their steps.
    const earlier = JSON.parse(gunzipSync(readFileSync(join(dir, "sample-data/tickets/tickets-2026.jsonl.gz"))).toString("utf8").split("\n")[4]).body as string;
    writeFileSync(join(dir, "sample-data/tickets/tickets-2027.jsonl.gz"), newTickets(30, earlier));
    const added = run();
    expect(added.steps.reused).toBeGreaterThan(0);
    expect(added.steps.computed).toBeGreaterThan(0);
    expect(built()).toEqual(clean());

    // One shift note changed in the middle of its file.
    const notes = join(dir, "sample-data/notes/shift-notes.csv");
    writeFileSync(notes, readFileSync(notes, "utf8").replace("Pit lights on road 3 flickering", "Pit lights on road 4 flickering"));
    const changed = run();
    expect(changed.steps.reused).toBeGreaterThan(0);
    expect(built()).toEqual(clean());

    // A manual removed.
    rmSync(join(dir, "sample-data/manuals/MN-07-sanding-system-service.txt"));
    const removed = run();
    expect(removed.steps.reused).toBeGreaterThan(0);
    expect(built()).toEqual(clean());

    // A packing setting: every unit's passes are reused, only the packing groups run again.
    writeFileSync(pipeline, readFileSync(pipeline, "utf8").replace("length: 512", "length: 384"));
    const packing = run();
    expect(packing.steps.reused).toBeGreaterThan(packing.steps.computed);
    const cleanBytes = clean();
    expect(built()).toEqual(cleanBytes);

    // Nothing changed but --force: every step comes from the cache.
    const again = run("--force");
    expect(again.steps.computed).toBe(0);
    expect(built()).toEqual(cleanBytes);
  });

  it("an input rewritten with its size and modification time kept is hashed and read again", async () => {
    const { dir, run, clean, built } = setup();
    const notes = join(dir, "sample-data/notes/shift-notes.csv");
    // A whole second, which utimes sets exactly; then 2 s more, so the inputs' hashes are kept (src/cache/input-hashes.ts).
    const then = Math.floor(Date.now() / 1000) - 3600;
    utimesSync(notes, then, then);
    await new Promise((r) => setTimeout(r, 2300));
    run();
    const cache = join(dir, "build/.demo.cache");
    expect(readdirSync(cache).filter((n) => /^hash-[0-9a-f]{16}\.json$/.test(n)).length).toBeGreaterThan(0);
    // Same length, another road; the modification time set back, as `cp -p`, `tar` or `rsync -t` would.
    const size = statSync(notes).size;
    writeFileSync(notes, readFileSync(notes, "utf8").replace("Pit lights on road 3 flickering", "Pit lights on road 4 flickering"));
    utimesSync(notes, then, then);
    expect(statSync(notes).size).toBe(size);
    expect(statSync(notes).mtimeMs).toBe(then * 1000);
    // Not "up to date", and not built from the kept hash of the old bytes.
    const r = siftpack(["run", join(dir, "pipelines/demo.yaml"), "--workers", "2"], { env: { ...env, SIFTPACK_LOG: "info" } });
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).not.toMatch(/up to date/);
    expect(r.stderr).toMatch(/building: input changed: .*shift-notes\.csv/);
    expect(built()).toEqual(clean());
  });

  it("a cache entry edited behind siftpack's back is found stale, not used, and made again", () => {
    const { dir, run, built } = setup();
    run();
    // The bytes of the build before the edit: the cache held what made them.
    const before = built();
    const cache = join(dir, "build/.demo.cache");
    // The largest kept step file (a packing group's shard, or a unit's records): same size, other bytes.
    const blob = keptFiles(cache)
      .filter((f) => !f.path.includes("/analysis-"))
      .sort((a, b) => b.size - a.size)[0].blob;
    const bytes = readFileSync(join(cache, blob));
    bytes[bytes.length >> 1] ^= 0xff;
    // A new file under the entry's name: the build's own hard link to the old one keeps its bytes.
    rmSync(join(cache, blob));
    writeFileSync(join(cache, blob), bytes);
    const r = run("--force");
    expect(r.stderr).toMatch(new RegExp(`cache entry ${blob.replace(/\.\d+$/, "")} is stale \\(.* changed since it was kept\\)`));
    expect(r.steps.computed).toBeGreaterThan(0);
    expect(built()).toEqual(before);
    // Made again: the next build reuses every step.
    expect(run("--force").steps.computed).toBe(0);
  });

  it("a piece of the analyses' collection edited behind siftpack's back is found stale when its group is packed again", () => {
    const { dir, run, built } = setup();
    run();
    const before = built();
    const cache = join(dir, "build/.demo.cache");
    const kept = keptFiles(cache);
    // A piece's entry holds collected files only; a group's entry holds its shards (and its pieces' files, under second names).
    const entries = new Map<string, typeof kept>();
    for (const f of kept) entries.set(f.key, [...(entries.get(f.key) ?? []), f]);
    const pieces = [...entries.values()].filter((fs) => fs.every((f) => f.path.includes("/analysis-")));
    const groups = [...entries.values()].filter((fs) => fs.some((f) => f.path.includes("/groups/")));
    expect(pieces.length).toBeGreaterThan(0);
    expect(groups.length).toBeGreaterThan(0);
    const blob = pieces.flat().sort((a, b) => b.size - a.size)[0].blob;
    const bytes = readFileSync(join(cache, blob));
    bytes[bytes.length >> 1] ^= 0xff;
    rmSync(join(cache, blob));
    writeFileSync(join(cache, blob), bytes);
    // Every group packed again (their entries gone), so every piece is looked up.
    for (const fs of groups) rmSync(join(cache, `step-${fs[0].key}.json`));
    const r = run("--force");
    expect(r.stderr).toMatch(new RegExp(`cache entry ${blob.replace(/\.\d+$/, "")} is stale \\(.* changed since it was kept\\)`));
    expect(r.steps.computed).toBe(groups.length);
    expect(built()).toEqual(before);
    expect(run("--force").steps.computed).toBe(0);
  });
  it("a unit passed again with every record's ids from its token entry leaves that entry as it was", () => {
    const { dir, pipeline, clean, built } = setup();
    const json = () => {
      const r = siftpack(["run", pipeline, "--json", "--quiet", "--workers", "2"], { env });
      expect(r.code, r.stderr).toBe(0);
      return JSON.parse(r.stdout).cache.tokens as { reused: number; computed: number; records_reused: number; records_computed: number };
    };
    json();
    const cache = join(dir, "build/.demo.cache");
    const entries = () => new Map(readdirSync(cache).filter((n) => /^tokens-[0-9a-f]{16}\.bin$/.test(n)).map((n) => [n, statSync(join(cache, n))] as const));
    const before = entries();
    // An echo of an earlier ticket changes the dedup decisions about the earlier file: its unit passes again, its texts unchanged.
    const earlier = JSON.parse(gunzipSync(readFileSync(join(dir, "sample-data/tickets/tickets-2026.jsonl.gz"))).toString("utf8").split("\n")[4]).body as string;
    writeFileSync(join(dir, "sample-data/tickets/tickets-2027.jsonl.gz"), newTickets(30, earlier));
    const tokens = json();
    // Entries of earlier files were looked up again (their units passed again) and all their records found.
    expect(tokens.reused).toBeGreaterThan(0);
    expect(tokens.records_reused).toBeGreaterThan(0);
    const after = entries();
    let kept = 0;
    for (const [n, st] of before) {
      const now = after.get(n);
      if (!now) continue;
      expect({ n, ino: now.ino, mtime: now.mtimeMs }).toEqual({ n, ino: st.ino, mtime: st.mtimeMs });
      kept++;
    }
    expect(kept).toBeGreaterThan(0);
    expect(built()).toEqual(clean());
  });
});
