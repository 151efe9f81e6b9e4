// Which folders a build may replace, one run per output at a time, and faults of the machine
// (a read-only folder, a second run, an alias bomb) told in one line with the previous build intact.
import { describe, expect, it } from "vitest";
import { spawn, spawnSync } from "node:child_process";
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from "node:fs";
import { hostname } from "node:os";
import { join } from "node:path";
import { setTimeout as sleep } from "node:timers/promises";
import { ROOT, demoCopy, outputFiles, siftpack, tempDir, tmpfsForSuite } from "./cli.js";

/** A small invented corpus of depot shift notes with its pipeline (p.yaml); `outDir` as written in the file. */
function project(outDir = "build/notes"): string {
  const dir = tempDir("safety");
  mkdirSync(join(dir, "notes"));
  const depots = ["Harrowgate", "Millbrook", "Quayside"];
  for (const [i, depot] of depots.entries())
    writeFileSync(
      join(dir, "notes", `depot-${i + 1}.txt`),
      `Shift note from ${depot} depot. Tram ${40 + i} came back from the evening run with a squealing wheel on bogie two. ` +
        `The night crew turned the wheel set on the lathe, checked the sanding gear and signed the vehicle off for the early service.\n`,
    );
  writeFileSync(
    join(dir, "p.yaml"),
    `siftpack: 1\nsources:\n  - name: notes\n    files: notes/*.txt\n    format: text\nstages:\n  - tokenize: { encoding: gpt2, eos: true }\n  - pack: { length: 32 }\noutput:\n  dir: ${outDir}\n`,
  );
  return dir;
}

/** Every file under dir with its text, to show a folder was left as it was. */
function snapshot(dir: string): Record<string, string> {
  const out: Record<string, string> = {};
  for (const e of readdirSync(dir, { withFileTypes: true, recursive: true }))
    if (e.isFile()) out[join(e.parentPath, e.name).slice(dir.length + 1)] = readFileSync(join(e.parentPath, e.name), "utf8");
  return out;
}

/** One line on stderr, no stack. */
const ONE_LINE = /^siftpack: error: [^\n]+\n$/;

describe("folders a build may replace", () => {
  it("refuses a folder whose manifest.json is not siftpack's and leaves it untouched", () => {
    const dir = project();
    const app = join(dir, "timetable-app");
    mkdirSync(app);
    writeFileSync(join(app, "manifest.json"), JSON.stringify({ name: "tram-timetable", start_url: "/" }));
    writeFileSync(join(app, "app.js"), "console.log('next tram in 4 minutes');\n");
    const before = snapshot(dir);
    const r = siftpack(["run", join(dir, "p.yaml"), "--out", app]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(ONE_LINE);
    expect(r.stderr).toMatch(/^siftpack: error: refusing to replace .*timetable-app: its manifest\.json is not a siftpack manifest \(it has no format, not "siftpack\/2"\), so it is not a siftpack output; choose a new or empty output directory\n$/);
    expect(snapshot(dir)).toEqual(before);
  });

  it("refuses the pipeline file's own folder as output, creating nothing beside it", () => {
    const dir = project(".");
    writeFileSync(join(dir, "manifest.json"), JSON.stringify({ name: "depot-board" }));
    writeFileSync(join(dir, "app.js"), "export const depots = 3;\n");
    const before = snapshot(dir);
    const r = siftpack(["run", join(dir, "p.yaml")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(ONE_LINE);
    expect(r.stderr).toMatch(/^siftpack: error: refusing to build into .*: it is the pipeline file's directory, and a build replaces its output directory whole; set output\.dir \(or --out\) to a folder of its own, such as build\/NAME\n$/);
    expect(snapshot(dir)).toEqual(before);
    expect(readdirSync(join(dir, "..")).filter((f) => f.includes(`${dir.split("/").pop()}.`))).toEqual([]);
  });

  it("refuses an output folder that contains an input file, or the pipeline's folder", () => {
    const dir = project();
    const r = siftpack(["run", join(dir, "p.yaml"), "--out", join(dir, "notes")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/^siftpack: error: refusing to build into .*\/notes: it contains the input file .*\/notes\/depot-1\.txt, and a build replaces/);
    expect(r.stderr).toMatch(ONE_LINE);
    const up = siftpack(["run", join(dir, "p.yaml"), "--out", join(dir, "..")]);
    expect(up.code).toBe(1);
    expect(up.stderr).toMatch(/^siftpack: error: refusing to build into .*: it contains the pipeline file's directory /);
    expect(readdirSync(join(dir, "notes"))).toHaveLength(3);
  });

  it("refuses a siftpack build holding a file its manifest does not list, naming that file", () => {
    const dir = project();
    expect(siftpack(["run", join(dir, "p.yaml")]).code).toBe(0);
    writeFileSync(join(dir, "build/notes/train/wheel-lathe-log.txt"), "lathe hours: 6\n");
    const r = siftpack(["run", join(dir, "p.yaml")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/^siftpack: error: refusing to replace .*build\/notes: it holds train\/wheel-lathe-log\.txt, which its manifest does not list; move that file away or choose another output directory\n$/);
    expect(readFileSync(join(dir, "build/notes/train/wheel-lathe-log.txt"), "utf8")).toBe("lathe hours: 6\n");
  });

  it("replaces an earlier build (with a report written into it), keeps the report beside it, and leaves no lock behind", () => {
    const dir = project();
    expect(siftpack(["run", join(dir, "p.yaml")]).code).toBe(0);
    expect(siftpack(["report", join(dir, "build/notes")]).code).toBe(0);
    expect(siftpack(["report", join(dir, "build/notes"), "--out", join(dir, "build/notes/report.html")]).code).toBe(0);
    // --force: the earlier build is up to date, and this is about replacing it.
    const again = siftpack(["run", join(dir, "p.yaml"), "--force"]);
    expect(again.code).toBe(0);
    expect(again.stderr).toBe("");
    expect(siftpack(["verify", join(dir, "build/notes")]).code).toBe(0);
    // The default report sits beside the build and outlives the rebuild; the one inside went with the old build.
    expect(readdirSync(join(dir, "build")).sort()).toEqual([".notes.cache", "notes", "notes.report.html"]);
    expect(existsSync(join(dir, "build/notes/report.html"))).toBe(false);
  });
});

/** Runs the CLI without waiting; resolves with its exit code and stderr. */
function start(args: string[]): { pid: number; done: Promise<{ code: number | null; stderr: string }> } {
  const child = spawn(process.execPath, [join(ROOT, "bin/siftpack.js"), ...args], { env: { ...process.env, SIFTPACK_LOG: "warn" }, stdio: ["ignore", "ignore", "pipe"] });
  let stderr = "";
  child.stderr.on("data", (b) => (stderr += b));
  return { pid: child.pid!, done: new Promise((res) => child.on("close", (code) => res({ code, stderr }))) };
}

/** Waits until `path` exists (a build reached a point), polling often enough to stop it there. */
async function until(path: string, ms = 20_000): Promise<void> {
  for (const t0 = Date.now(); !existsSync(path); await sleep(2)) if (Date.now() - t0 > ms) throw new Error(`${path} never appeared`);
}

describe("one run per output", () => {
  it("a second run into the same output refuses naming the first; the first finishes and verifies", async () => {
    const dir = demoCopy();
    const pipeline = join(dir, "pipelines/demo.yaml");
    const first = start(["run", pipeline, "--quiet"]);
    // Held still while it holds the lock, so that the second surely meets it.
    await until(join(dir, "build/.demo.lock"));
    process.kill(first.pid, "SIGSTOP");
    let b: Awaited<ReturnType<typeof start>["done"]>;
    try {
      b = await start(["run", pipeline, "--quiet"]).done;
    } finally {
      process.kill(first.pid, "SIGCONT");
    }
    const a = await first.done;
    expect(b.code).toBe(1);
    expect(b.stderr).toMatch(ONE_LINE);
    expect(b.stderr).toBe(
      `siftpack: error: ${join(dir, "build/demo")} is being built by another run (pid ${first.pid} on ${hostname()}, since ${b.stderr.match(/since ([^)]+)\)/)![1]}); wait for it to finish, or remove ${join(dir, "build/.demo.lock")} if that run is gone\n`,
    );
    expect(a.code).toBe(0);
    expect(siftpack(["verify", join(dir, "build/demo")]).code).toBe(0);
    expect(existsSync(join(dir, "build/.demo.lock"))).toBe(false);
  });

  it("takes over the lock of a run that is gone, with a warning", () => {
    const dir = project();
    const gone = spawnSync("true").pid;
    mkdirSync(join(dir, "build"));
    writeFileSync(join(dir, "build/.notes.lock"), JSON.stringify({ pid: gone, host: hostname(), started: "2026-11-30T05:00:00.000Z" }));
    const r = siftpack(["run", join(dir, "p.yaml")]);
    expect(r.code).toBe(0);
    expect(r.stderr).toContain(`taking over the lock ${join(dir, "build/.notes.lock")} of run pid ${gone} on ${hostname()}, which is no longer running`);
    expect(existsSync(join(dir, "build/.notes.lock"))).toBe(false);
  });
});

describe("a read-only folder", () => {
  // Tests run as root, where chmod stops no write: a read-only mount does. A read-only bind of the
  // folder onto itself (a remount would be refused while a build holds files open), popped to undo.
  const mnt = tempDir("readonly");
  const mounted = tmpfsForSuite(mnt, "64m");
  const readOnly = () => {
    expect(spawnSync("mount", ["--bind", mnt, mnt]).status).toBe(0);
    if (spawnSync("mount", ["-o", "remount,bind,ro", mnt]).status !== 0) {
      spawnSync("umount", [mnt]);
      throw new Error(`cannot make ${mnt} read-only`);
    }
  };
  const writable = () => expect(spawnSync("umount", [mnt]).status).toBe(0);

  it.runIf(mounted)("from the start: one line naming the lock file, the previous build intact", () => {
    const out = join(mnt, "before");
    expect(siftpack(["run", "pipelines/demo.yaml", "--out", out]).code).toBe(0);
    const before = outputFiles(out);
    readOnly();
    try {
      const r = siftpack(["run", "pipelines/demo.yaml", "--out", out]);
      expect(r.code).toBe(1);
      expect(r.stderr).toBe(`siftpack: error: cannot write the lock file ${join(mnt, ".before.lock")} beside output directory ${out}: read-only file system; build on a writable file system with --out\n`);
      expect(outputFiles(out)).toEqual(before);
      expect(siftpack(["verify", out]).code).toBe(0);
    } finally {
      writable();
    }
  });

  it.runIf(mounted)("made read-only during the run: one line, not the work folder's cleanup, the previous build intact", async () => {
    const out = join(mnt, "during");
    expect(siftpack(["run", "pipelines/demo.yaml", "--out", out]).code).toBe(0);
    const before = outputFiles(out);
    // --no-cache: every phase writes, so the build surely writes after the remount.
    const run = start(["run", "pipelines/demo.yaml", "--out", out, "--no-cache", "--quiet"]);
    await until(join(mnt, ".during.run"));
    process.kill(run.pid, "SIGSTOP");
    try {
      readOnly();
    } catch (err) {
      process.kill(run.pid, "SIGCONT");
      await run.done;
      throw err;
    }
    try {
      process.kill(run.pid, "SIGCONT");
      const r = await run.done;
      expect(r.code).toBe(1);
      expect(r.stderr).toMatch(ONE_LINE);
      expect(r.stderr).toMatch(new RegExp(`^siftpack: error: .*${mnt}/\\.during\\.run.*: read-only file system; build on a writable file system with --out\\n$`));
      expect(outputFiles(out)).toEqual(before);
      expect(siftpack(["verify", out]).code).toBe(0);
    } finally {
      writable();
    }
  });
});

describe("a pipeline file", () => {
  it("with an alias bomb is a pipeline error: exit 2, one line at the first alias", () => {
    const dir = tempDir("bomb");
    const rows = ["a: &a [tram, tram, tram, tram, tram, tram, tram, tram, tram]"];
    for (const [k, prev] of [["b", "a"], ["c", "b"], ["d", "c"], ["e", "d"], ["f", "e"]]) rows.push(`${k}: &${k} [${Array(9).fill(`*${prev}`).join(", ")}]`);
    writeFileSync(join(dir, "p.yaml"), `siftpack: 1\n${rows.join("\n")}\n`);
    const r = siftpack(["run", join(dir, "p.yaml")]);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(`siftpack: error: ${join(dir, "p.yaml")}:3:8: aliases (*a and others) expand into more than 100 copies of their values; write the values out instead of nesting aliases\n`);
  });
});
