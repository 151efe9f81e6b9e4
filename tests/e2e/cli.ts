// Helpers for end-to-end tests: run the built CLI as a user would, in temp directories.
import { spawnSync } from "node:child_process";
import { existsSync, mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";

export const ROOT = resolve(import.meta.dirname, "../..");
const BIN = join(ROOT, "bin/siftpack.js");

export interface CliResult {
  code: number;
  stdout: string;
  stderr: string;
}

export function siftpack(args: string[], opts: { cwd?: string; input?: string } = {}): CliResult {
  if (!existsSync(join(ROOT, "dist/cli/main.js"))) throw new Error("dist/ is missing: run `npm run build` (npm test does it)");
  const r = spawnSync(process.execPath, [BIN, ...args], {
    cwd: opts.cwd ?? ROOT,
    input: opts.input,
    encoding: "utf8",
    env: { ...process.env, SIFTPACK_LOG: "warn" },
    maxBuffer: 64 << 20,
  });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr };
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
