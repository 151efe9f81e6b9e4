#!/usr/bin/env node
// What the tests need from the machine beyond Node.js and npm: the one list of Debian packages, and
// the check `npm test` runs before any test. As root with apt-get, missing packages are installed;
// otherwise one line names the command to run, and the tests do not start.
//
//   node scripts/test-needs.mjs            check, install what is missing (root with apt-get), else explain and exit 1
//   node scripts/test-needs.mjs --check    check only: exit 1 with the same line when something is missing
//   node scripts/test-needs.mjs --list     print the package names, one a line
//
// SIFTPACK_TEST_NEEDS_MISSING=zstd,chromium makes the first check take those packages for missing, so
// what a bare machine gets (the line, or the install and the check after it) shows without removing anything.
import { spawnSync } from "node:child_process";
import { accessSync, constants, existsSync } from "node:fs";
import { delimiter, join } from "node:path";

/** A command on PATH (and in the sbin folders, where Debian puts daemons a non-login PATH may lack). */
const command = (name) => () => [...(process.env.PATH ?? "").split(delimiter), "/usr/sbin", "/sbin"].some((dir) => dir !== "" && executable(join(dir, name)));
const file = (path) => () => existsSync(path);
const executableFile = (path) => () => executable(path);
function executable(path) {
  try {
    accessSync(path, constants.X_OK);
    return true;
  } catch {
    return false;
  }
}

/**
 * Package, what the tests use it for, and how to tell it is there. `rootOnly`: the only test using
 * it skips itself without root (it starts daemons), so a user without root is not asked for it.
 */
export const NEEDS = [
  // The e2e tests open our .npy files with NumPy, through the system interpreter.
  { pkg: "python3-numpy", what: "NumPy for /usr/bin/python3", present: () => spawnSync("/usr/bin/python3", ["-c", "import numpy"], { stdio: "ignore" }).status === 0 },
  // The Unicode conformance file the normalize test checks against, and bzcat to read it.
  { pkg: "unicode-data", what: "NormalizationTest.txt", present: file("/usr/share/unicode/NormalizationTest.txt.bz2") },
  { pkg: "bzip2", what: "bzcat", present: command("bzcat") },
  // zstd makes the .zst inputs of the zstd and Parquet tests.
  { pkg: "zstd", what: "zstd", present: command("zstd") },
  // Debian's chromium: the report test opens the demo report in it through playwright-core (which downloads no browser).
  { pkg: "chromium", what: "/usr/bin/chromium", present: executableFile("/usr/bin/chromium") },
  // script gives the progress test a pseudo-terminal.
  { pkg: "bsdutils", what: "script", present: command("script") },
  // tests/launch/slurm.test.ts runs a single-node cluster (scripts/slurm/local-cluster.sh).
  { pkg: "slurm-wlm", what: "slurmctld", present: command("slurmctld"), rootOnly: true },
  { pkg: "munge", what: "munged", present: command("munged"), rootOnly: true },
];

const pretend = new Set((process.env.SIFTPACK_TEST_NEEDS_MISSING ?? "").split(",").map((s) => s.trim()).filter(Boolean));
const unknown = [...pretend].filter((p) => !NEEDS.some((n) => n.pkg === p));
if (unknown.length > 0) {
  console.error(`SIFTPACK_TEST_NEEDS_MISSING names no package of the list: ${unknown.join(", ")} (the list: ${NEEDS.map((n) => n.pkg).join(", ")})`);
  process.exit(2);
}

const isRoot = process.getuid?.() === 0;
const APT = ["/usr/bin/apt-get", "/bin/apt-get"].find(executable);
const hasApt = APT !== undefined;
/** Missing packages, leaving out the root-only ones for a user without root; `first`: the pretended ones too. */
const missing = (first) => NEEDS.filter((n) => (isRoot || !n.rootOnly) && ((first && pretend.has(n.pkg)) || !n.present()));

/** The one line shown when something is missing. */
function explain(list, installFailed) {
  const names = list.map((n) => n.pkg).join(" ");
  const what = list.map((n) => `${n.pkg} (${n.what})`).join(", ");
  const how = hasApt ? `run: ${isRoot ? "" : "sudo "}apt-get update && ${isRoot ? "" : "sudo "}apt-get install -y ${names}` : `install the equivalents of these Debian packages: ${names}`;
  return `siftpack tests need Debian packages missing here: ${what}${installFailed ? " (still missing after apt-get install)" : ""}; ${how}`;
}

const mode = process.argv[2];
if (mode === "--list") {
  for (const n of NEEDS) console.log(n.pkg);
  process.exit(0);
}
if (mode !== undefined && mode !== "--check") {
  console.error(`usage: node scripts/test-needs.mjs [--check | --list]`);
  process.exit(2);
}

let lacking = missing(true);
if (lacking.length === 0) process.exit(0);
if (mode === "--check" || !isRoot || !hasApt) {
  console.error(explain(lacking, false));
  process.exit(1);
}
console.error(`siftpack tests: installing ${lacking.map((n) => n.pkg).join(" ")} with apt-get`);
const env = { ...process.env, DEBIAN_FRONTEND: "noninteractive" };
for (const args of [["update"], ["install", "-y", ...lacking.map((n) => n.pkg)]]) {
  const r = spawnSync(APT, args, { stdio: ["ignore", "inherit", "inherit"], env });
  if (r.status !== 0) {
    console.error(`apt-get ${args[0]} failed (exit ${r.status ?? r.signal}); ${explain(lacking, false)}`);
    process.exit(1);
  }
}
lacking = missing(false);
if (lacking.length > 0) {
  console.error(explain(lacking, true));
  process.exit(1);
}
