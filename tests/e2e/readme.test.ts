// The README's quick start, run as written: its lines are read from README.md, so the test fails when
// the README and the command drift apart. The set-up's `npm link` is run for real, into a temporary
// global folder (npm_config_prefix), so the lines find `siftpack` on PATH as a user's shell would.
import { beforeAll, describe, expect, it } from "vitest";
import { spawnSync } from "node:child_process";
import { existsSync, readFileSync, realpathSync } from "node:fs";
import { join } from "node:path";
import { ROOT, demoCopy, tempDir } from "./cli.js";

/** The first ```sh block after the "Quick start" paragraph of README.md, one command a line. */
function quickStart(readme: string): string[] {
  const at = readme.indexOf("Quick start");
  if (at < 0) throw new Error("README.md has no Quick start");
  const block = /```sh\n([\s\S]*?)```/.exec(readme.slice(at));
  if (!block) throw new Error("README.md: no ```sh block after Quick start");
  return block[1].split("\n").filter((l) => l.trim() !== "");
}

const lines = quickStart(readFileSync(join(ROOT, "README.md"), "utf8"));
const prefix = tempDir("npm-global");
const PATH = `${join(prefix, "bin")}:${process.env.PATH}`;
let project = "";
const ran: { line: string; code: number | null; stdout: string; stderr: string }[] = [];

beforeAll(() => {
  const [setup, ...commands] = lines;
  // The set-up: `npm install` has run in this checkout already (npm test needs it); `npm link` runs
  // here, offline and without scripts (dist/ is built), with a global folder of its own.
  for (const step of setup.replace(/#.*$/, "").split("&&").map((s) => s.trim())) {
    if (step === "npm install") expect(existsSync(join(ROOT, "node_modules")) && existsSync(join(ROOT, "dist/cli/main.js"))).toBe(true);
    else if (step === "npm link") {
      const r = spawnSync("npm", ["link", "--offline", "--ignore-scripts", "--no-audit", "--no-fund"], {
        cwd: ROOT,
        encoding: "utf8",
        env: { ...process.env, npm_config_prefix: prefix, npm_config_cache: join(prefix, "cache"), npm_config_update_notifier: "false" },
      });
      expect(r.status, r.stderr).toBe(0);
    } else throw new Error(`README quick start: set-up step "${step}" is not one this test knows how to run`);
  }
  // The demo lines use paths relative to a clone: run them in a copy of its demo files.
  project = demoCopy();
  for (const line of commands) {
    const r = spawnSync("bash", ["-c", line], { cwd: project, encoding: "utf8", env: { ...process.env, PATH, SIFTPACK_LOG: "warn" }, maxBuffer: 64 << 20 });
    ran.push({ line, code: r.status, stdout: r.stdout, stderr: r.stderr });
  }
}, 240_000);

describe("the README's quick start", () => {
  it("links the siftpack command to this checkout", () => {
    const found = spawnSync("bash", ["-c", "command -v siftpack"], { encoding: "utf8", env: { ...process.env, PATH } });
    expect(found.stdout.trim()).toBe(join(prefix, "bin/siftpack"));
    expect(realpathSync(found.stdout.trim())).toBe(realpathSync(join(ROOT, "bin/siftpack.js")));
  });

  it("runs every line as written, with exit 0 and nothing on stderr", () => {
    expect(ran.length).toBeGreaterThanOrEqual(4);
    for (const r of ran) {
      expect(r.line).toMatch(/^siftpack /);
      expect({ line: r.line, code: r.code, stderr: r.stderr }).toEqual({ line: r.line, code: 0, stderr: "" });
    }
  });

  it("builds the demo, and what the lines say they do happens", () => {
    const out = (cmd: string) => ran.find((r) => r.line.startsWith(`siftpack ${cmd} `))?.stdout ?? "";
    expect(existsSync(join(project, "build/demo/manifest.json"))).toBe(true);
    expect(out("verify")).toMatch(/^ok: \d+ files match the manifest/);
    expect(out("inspect")).toContain("│ ◆ ");
    expect(out("stats")).toContain("train");
    if (ran.some((r) => r.line.startsWith("siftpack report "))) expect(existsSync(join(project, "build/demo.report.html"))).toBe(true);
  });
});
