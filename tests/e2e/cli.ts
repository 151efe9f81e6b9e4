// Helpers for end-to-end tests: run the built CLI as a user would, in temp directories.
import { afterAll, beforeAll, expect } from "vitest";
import { spawnSync } from "node:child_process";
import { cpSync, existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, statSync, writeFileSync } from "node:fs";
import { parse as parseYaml, stringify as stringifyYaml } from "yaml";
import { tmpdir } from "node:os";
import { gunzipSync } from "node:zlib";
import { join, resolve } from "node:path";

export const ROOT = resolve(import.meta.dirname, "../..");
const BIN = join(ROOT, "bin/siftpack.js");

export interface CliResult {
  code: number;
  stdout: string;
  stderr: string;
}

export function siftpack(args: string[], opts: { cwd?: string; input?: string; env?: Record<string, string> } = {}): CliResult & { signal: NodeJS.Signals | null } {
  if (!existsSync(join(ROOT, "dist/cli/main.js"))) throw new Error("dist/ is missing: run `npm run build` (npm test does it)");
  const r = spawnSync(process.execPath, [BIN, ...args], {
    cwd: opts.cwd ?? ROOT,
    input: opts.input,
    encoding: "utf8",
    env: { ...process.env, SIFTPACK_LOG: "warn", ...opts.env },
    maxBuffer: 64 << 20,
  });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr, signal: r.signal };
}

export function tempDir(prefix: string): string {
  return mkdtempSync(join(tmpdir(), `siftpack-${prefix}-`));
}

/** Runs a Python snippet with the system interpreter (Debian's python3-numpy), returning stdout. */
export function python(code: string, args: string[] = []): string {
  const r = spawnSync("/usr/bin/python3", ["-c", code, ...args], { encoding: "utf8", maxBuffer: 64 << 20 });
  if (r.status !== 0) throw new Error(`python failed (${r.status}): ${r.stderr}`);
  return r.stdout;
}

/** A copy of the demo pipeline and corpus in a temp dir, its files written in the given order. */
export function demoCopy(order: "forward" | "reverse" = "forward"): string {
  const dir = tempDir(`copy-${order}`);
  const files: string[] = [];
  const walk = (rel: string) => {
    for (const e of readdirSync(join(ROOT, rel), { withFileTypes: true })) {
      if (e.isDirectory()) walk(join(rel, e.name));
      else files.push(join(rel, e.name));
    }
  };
  walk("sample-data");
  if (order === "reverse") files.reverse();
  for (const f of files) {
    mkdirSync(join(dir, f, ".."), { recursive: true });
    cpSync(join(ROOT, f), join(dir, f));
  }
  mkdirSync(join(dir, "pipelines"));
  cpSync(join(ROOT, "pipelines/demo.yaml"), join(dir, "pipelines/demo.yaml"));
  return dir;
}

/**
 * The demo pipeline with the line of stage `stage` replaced by `- stage: line`, its inputs pointed at
 * the repository's sample data by absolute path, written as dir/p.yaml; returns its path.
 */
export function demoVariant(dir: string, stage: string, line: string): string {
  const text = readFileSync(join(ROOT, "pipelines/demo.yaml"), "utf8")
    .replaceAll("../sample-data/", join(ROOT, "sample-data") + "/")
    .replace(new RegExp(`^ {2}- ${stage}: .*$`, "m"), `  - ${stage}: ${line}`);
  if (!text.includes(line)) throw new Error(`the demo pipeline has no ${stage} line to replace`);
  writeFileSync(join(dir, "p.yaml"), text);
  return join(dir, "p.yaml");
}

/** Every file of a build (but build-info.json, which holds times and paths), as base64 by path. */
export function outputFiles(dir: string): Record<string, string> {
  const out: Record<string, string> = {};
  const walk = (rel: string) => {
    for (const e of readdirSync(join(dir, rel), { withFileTypes: true })) {
      const p = rel ? `${rel}/${e.name}` : e.name;
      if (e.isDirectory()) walk(p);
      else if (p !== "build-info.json") out[p] = readFileSync(join(dir, p)).toString("base64");
    }
  };
  walk("");
  return out;
}

/**
 * A copy of a demo copy's pipeline with `tasks` per phase and its own work and output directories,
 * edited by `edit`; returns its path. Same file name and depth as the original (the manifest names
 * the pipeline file).
 */
export function demoPipelineWith(dir: string, name: string, tasks: number, edit: (pipeline: any) => void = () => {}): string {
  const base = parseYaml(readFileSync(join(dir, "pipelines/demo.yaml"), "utf8"));
  base.cluster = { tasks, work_dir: `../work-${name}` };
  base.output.dir = `../build/${name}`;
  edit(base);
  mkdirSync(join(dir, `pipelines-${name}`));
  const file = join(dir, `pipelines-${name}`, "demo.yaml");
  writeFileSync(file, stringifyYaml(base));
  return file;
}

/** 4 KiB blocks under dir as tmpfs counts them, a file with several names (a unit file and its cache entry) counted once. */
export function blocksOf(dir: string, seen = new Set<number>()): number {
  let n = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    if (e.isDirectory()) n += 1 + blocksOf(p, seen);
    else {
      const st = statSync(p);
      if (!seen.has(st.ino)) n += Math.ceil(st.size / 4096);
      seen.add(st.ino);
    }
  }
  return n;
}

/** The lines of a build's ledger (ledger.jsonl.gz in `dir`), parsed. */
export function ledgerLines(dir: string): any[] {
  return gunzipSync(readFileSync(join(dir, "ledger.jsonl.gz")))
    .toString("utf8")
    .split("\n")
    .filter(Boolean)
    .map((l) => JSON.parse(l));
}

/**
 * A tmpfs of `size` (mount's size option, e.g. "64m") at `mnt` for the tests of the calling
 * describe: probed now (mounted and unmounted; mounting needs root), mounted before its tests run
 * and unmounted after, so a filtered run that skips them (and their hooks) leaves no mount behind.
 * Returns whether mounting works here.
 */
export function tmpfsForSuite(mnt: string, size: string): boolean {
  const mount = () => spawnSync("mount", ["-t", "tmpfs", "-o", `size=${size}`, "tmpfs", mnt]).status === 0;
  const mounted = mount() && spawnSync("umount", [mnt]).status === 0;
  beforeAll(() => {
    if (mounted) expect(mount()).toBe(true);
  });
  afterAll(() => {
    if (mounted) spawnSync("umount", [mnt]);
  });
  return mounted;
}
