// scripts/test-needs.mjs, the check `npm test` runs before any test: it must see a missing package
// (here made missing by a PATH without its command, or by SIFTPACK_TEST_NEEDS_MISSING) and say in one
// line which apt-get command installs it; and .ci/run must be the README's test command and nothing else.
import { describe, expect, it } from "vitest";
import { spawnSync } from "node:child_process";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { ROOT, tempDir } from "../e2e/cli.js";

const SCRIPT = join(ROOT, "scripts/test-needs.mjs");
const root = process.getuid?.() === 0;

function check(env: Record<string, string>, args = ["--check"], asNobody = false) {
  const cmd = asNobody ? ["/usr/bin/setpriv", "--reuid=65534", "--regid=65534", "--clear-groups", process.execPath, SCRIPT, ...args] : [process.execPath, SCRIPT, ...args];
  const r = spawnSync(cmd[0], cmd.slice(1), { encoding: "utf8", env: { ...process.env, ...env } });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

describe("the test needs check", () => {
  it("passes quietly where everything is installed (as here: npm test ran it before this test)", () => {
    expect(check({})).toEqual({ code: 0, stdout: "", stderr: "" });
  });

  it("finds commands missing from PATH and names the packages and the command in one line", () => {
    // An empty folder as PATH: bzcat, zstd and script are gone; the files, python3 and apt-get are found by path.
    const r = check({ PATH: tempDir("empty-path") });
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(
      `siftpack tests need Debian packages missing here: bzip2 (bzcat), zstd (zstd), bsdutils (script); run: ${root ? "" : "sudo "}apt-get update && ${root ? "" : "sudo "}apt-get install -y bzip2 zstd bsdutils\n`,
    );
  });

  it("takes a package for missing when told to, and rejects a name not on the list", () => {
    const r = check({ SIFTPACK_TEST_NEEDS_MISSING: "chromium,python3-numpy" });
    expect(r.code).toBe(1);
    expect(r.stderr).toContain("python3-numpy (NumPy for /usr/bin/python3), chromium (/usr/bin/chromium); run: ");
    expect(r.stderr).toContain("apt-get install -y python3-numpy chromium\n");
    const bad = check({ SIFTPACK_TEST_NEEDS_MISSING: "numpy" });
    expect(bad.code).toBe(2);
    expect(bad.stderr).toContain("names no package of the list: numpy");
  });

  it.skipIf(!root)("without root it never installs: the line says sudo, and the root-only cluster packages are left out", () => {
    const r = check({ PATH: tempDir("empty-path-nobody"), SIFTPACK_TEST_NEEDS_MISSING: "slurm-wlm,zstd" }, [], true);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe("siftpack tests need Debian packages missing here: bzip2 (bzcat), zstd (zstd), bsdutils (script); run: sudo apt-get update && sudo apt-get install -y bzip2 zstd bsdutils\n");
  });

  it("lists every package once", () => {
    const list = check({}, ["--list"]).stdout.trim().split("\n");
    expect(new Set(list).size).toBe(list.length);
    expect(list).toEqual(expect.arrayContaining(["python3-numpy", "unicode-data", "chromium", "zstd"]));
  });

  it("runs before the tests in npm test, and .ci/run is the README's test command", () => {
    const pkg = JSON.parse(readFileSync(join(ROOT, "package.json"), "utf8"));
    expect(pkg.scripts.test).toMatch(/^node scripts\/test-needs\.mjs && /);
    const readme = readFileSync(join(ROOT, "README.md"), "utf8");
    const command = /^(npm install && npm test)\s+#/m.exec(readme)?.[1];
    expect(command).toBe("npm install && npm test");
    const ci = readFileSync(join(ROOT, ".ci/run"), "utf8").split("\n").filter((l) => l.trim() !== "" && !l.startsWith("#"));
    expect(ci.at(-1)).toBe(command);
    expect(ci.filter((l) => /apt-get|npm /.test(l))).toEqual([command]);
  });
});
