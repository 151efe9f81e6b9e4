// A real single-node Slurm (scripts/slurm/local-cluster.sh, in a temp dir): array jobs chained with
// afterok, then the demo built by the sbatch scripts `plan --emit slurm` writes, byte for byte
// the same as `siftpack run`. Skipped, saying why, without root, slurm-wlm and munge or a cluster.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { spawnSync } from "node:child_process";
import { existsSync, readFileSync, readdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { parseDocument } from "yaml";
import { ROOT, demoCopy, siftpack, tempDir } from "../e2e/cli.js";

const SCRIPT = join(ROOT, "scripts/slurm/local-cluster.sh");
/** How long the jobs of one test may take to leave the queue. */
const QUEUE_TIMEOUT_MS = 5 * 60_000;
/** A test's limit: the queue's, and time for the reference build and the comparison. */
const TEST_TIMEOUT_MS = QUEUE_TIMEOUT_MS + 3 * 60_000;

// The daemons are in /usr/sbin, which PATH may lack; the script looks there too.
const installed = (bin: string) => spawnSync("sh", ["-c", `PATH="$PATH:/usr/sbin:/sbin" command -v ${bin}`]).status === 0;
const missing = ["munged", "slurmctld", "slurmd", "sbatch", "squeue", "sinfo"].filter((b) => !installed(b));
const cannotRun =
  missing.length > 0
    ? `not installed: ${missing.join(", ")} (Debian packages slurm-wlm and munge; npm test installs them when run as root)`
    : process.getuid?.() !== 0
      ? "needs root: slurmd starts each job as its submitter"
      : undefined;
if (cannotRun) console.warn(`tests/launch/slurm.test.ts skipped: ${cannotRun}`);

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Every file under dir but build-info.json (times and paths), as base64 by relative path. */
function filesBut(dir: string, skip: string[]): Record<string, string> {
  const out: Record<string, string> = {};
  const walk = (rel: string) => {
    for (const e of readdirSync(join(dir, rel), { withFileTypes: true })) {
      const p = rel ? `${rel}/${e.name}` : e.name;
      if (e.isDirectory()) walk(p);
      else if (!skip.includes(p)) out[p] = readFileSync(join(dir, p)).toString("base64");
    }
  };
  walk("");
  return out;
}

describe.skipIf(cannotRun !== undefined)("on a local single-node Slurm cluster", () => {
  let clusterDir = "";
  /** Why the cluster is not there, when it is not. */
  let down: string | undefined;
  let env: Record<string, string> = {};

  beforeAll(() => {
    clusterDir = tempDir("slurm");
    const started = Date.now();
    const r = spawnSync(SCRIPT, ["start", clusterDir], { encoding: "utf8", timeout: 90_000 });
    if (r.status !== 0) {
      down = `\`${SCRIPT} start ${clusterDir}\` exited ${r.status ?? r.signal}: ${r.stderr.trim()}`;
      console.warn(`tests/launch/slurm.test.ts: the cluster did not come up, its tests are skipped.\n${down}`);
      return;
    }
    env = { SLURM_CONF: join(clusterDir, "slurm.conf") };
    console.info(`local Slurm up in ${Date.now() - started} ms (${clusterDir})`);
  }, 120_000);

  afterAll(() => {
    if (!clusterDir) return;
    const r = spawnSync(SCRIPT, ["stop", clusterDir], { encoding: "utf8", timeout: 60_000 });
    if (r.status !== 0) console.warn(`stopping the local Slurm failed (${r.status ?? r.signal}): ${r.stderr}`);
  }, 90_000);

  /** Runs a Slurm client command against this cluster; throws with its stderr when it fails. */
  function slurm(cmd: string, args: string[], cwd?: string): string {
    const r = spawnSync(cmd, args, { encoding: "utf8", cwd, env: { ...process.env, ...env }, timeout: 60_000 });
    if (r.status !== 0) throw new Error(`${cmd} ${args.join(" ")} exited ${r.status ?? r.signal}: ${r.stderr}${r.stdout}`);
    return r.stdout;
  }

  /** Waits until this cluster's queue is empty: every job finished, failed or was cancelled. */
  async function queueDrained(): Promise<number> {
    const started = Date.now();
    // A busy controller can time out one query; three failures in a row mean it is gone.
    let failures = 0;
    for (;;) {
      let queued: string;
      try {
        queued = slurm("squeue", ["-h", "-o", "%A"]).trim();
        failures = 0;
      } catch (err) {
        if (++failures === 3) throw err;
        queued = "?";
      }
      if (queued === "") return Date.now() - started;
      if (Date.now() - started > QUEUE_TIMEOUT_MS) throw new Error(`jobs still queued after ${QUEUE_TIMEOUT_MS / 1000} s:\n${slurm("squeue", [])}`);
      await sleep(500);
    }
  }

  /** Job name and final state of every job the cluster finished (its jobcomp/filetxt log). */
  const finishedJobs = () =>
    readFileSync(join(clusterDir, "jobcomp.log"), "utf8")
      .trim()
      .split("\n")
      .filter(Boolean)
      .map((l) => ({ name: /\bName=(\S+)/.exec(l)?.[1], state: /\bJobState=(\S+)/.exec(l)?.[1] }));

  it("runs an array job of 3 tasks, then a job held with --dependency=afterok until all of them succeeded", { timeout: TEST_TIMEOUT_MS }, async (ctx) => {
    if (down) ctx.skip(`no cluster: ${down}`);
    const dir = tempDir("slurm-toy");
    writeFileSync(join(dir, "parts.sbatch"), `#!/bin/sh\n#SBATCH --array=0-2\n#SBATCH --output=${dir}/parts-%a.out\nsleep 1\necho "part $SLURM_ARRAY_TASK_ID" > "${dir}/part-$SLURM_ARRAY_TASK_ID.txt"\n`);
    writeFileSync(join(dir, "join.sbatch"), `#!/bin/sh\n#SBATCH --output=${dir}/join.out\ncat "${dir}/part-0.txt" "${dir}/part-1.txt" "${dir}/part-2.txt" > "${dir}/all.txt"\n`);
    const parts = slurm("sbatch", ["--parsable", join(dir, "parts.sbatch")], dir).trim().split(";")[0];
    expect(parts).toMatch(/^\d+$/);
    slurm("sbatch", ["--parsable", `--dependency=afterok:${parts}`, join(dir, "join.sbatch")], dir);
    const ms = await queueDrained();
    console.info(`array job of 3 tasks and its dependent job done in ${ms} ms`);
    // join.sbatch fails (cat of a missing file) if it started before any part had finished.
    expect(readFileSync(join(dir, "all.txt"), "utf8")).toBe("part 0\npart 1\npart 2\n");
  });

  it("builds the demo with the emitted sbatch scripts, byte-identical to siftpack run", { timeout: TEST_TIMEOUT_MS }, async (ctx) => {
    if (down) ctx.skip(`no cluster: ${down}`);
    const dir = demoCopy();
    const file = join(dir, "pipelines/demo.yaml");
    const work = join(dir, "work");
    const doc = parseDocument(readFileSync(file, "utf8"));
    doc.set("cluster", doc.createNode({ tasks: 3, work_dir: work }));
    writeFileSync(file, doc.toString());

    // One CPU per task: on a two-core node two tasks of a phase then run at once, sharing the work
    // directory as tasks on different nodes would.
    const launch = join(dir, "launch");
    const plan = siftpack(["plan", file, "--emit", "slurm", "--to", launch, "--cpus", "1"]);
    expect(plan.stderr).toBe("");
    expect(plan.code).toBe(0);

    const started = Date.now();
    // submit.sh runs as is (sh, no login shell); the jobs inherit this environment (sbatch's
    // default --export=ALL), SLURM_CONF included.
    const submitted = slurm(join(launch, "submit.sh"), [], dir);
    expect(submitted).toMatch(/submitted 01-read\.sbatch as job \d+/);
    await queueDrained();
    const slurmMs = Date.now() - started;

    const status = siftpack(["status", work, "--json"]);
    expect(status.code, status.stderr).toBe(0);
    const phases: { phase: string; tasks: { index: number; state: string; error?: string }[] }[] = JSON.parse(status.stdout).phases;
    const notDone = phases.flatMap((p) => p.tasks.filter((t) => t.state !== "done").map((t) => `${p.phase} task ${t.index}: ${t.state}${t.error ? ` (${t.error})` : ""}`));
    expect(notDone, `status of the Slurm build:\n${siftpack(["status", work]).stdout}`).toEqual([]);
    const jobs = finishedJobs().filter((j) => j.name?.startsWith("siftpack-"));
    expect(jobs.filter((j) => j.state !== "COMPLETED")).toEqual([]);
    expect(new Set(jobs.map((j) => j.name))).toEqual(new Set(phases.map((p) => `siftpack-${p.phase}`)));

    const runStarted = Date.now();
    const run = siftpack(["run", file, "--out", join(dir, "by-run"), "--quiet"]);
    expect(run.stderr).toBe("");
    expect(run.code).toBe(0);
    console.info(`demo: ${slurmMs} ms through Slurm (3 tasks per phase), ${Date.now() - runStarted} ms with siftpack run`);

    // build-info.json holds times and paths; every other file, manifest.json included, must match.
    const bySlurm = join(dir, "build/demo");
    const byRun = join(dir, "by-run");
    for (const d of [bySlurm, byRun]) expect(existsSync(join(d, "build-info.json")), d).toBe(true);
    const manifest = JSON.parse(readFileSync(join(bySlurm, "manifest.json"), "utf8"));
    const slurmFiles = filesBut(bySlurm, ["build-info.json"]);
    expect(Object.keys(slurmFiles).sort()).toEqual(["manifest.json", ...manifest.files.map((f: { path: string }) => f.path)].sort());
    const runFiles = filesBut(byRun, ["build-info.json"]);
    expect(Object.keys(runFiles).sort()).toEqual(Object.keys(slurmFiles).sort());
    for (const [p, bytes] of Object.entries(slurmFiles)) expect(bytes === runFiles[p], `${p} differs`).toBe(true);
    expect(siftpack(["verify", bySlurm]).code).toBe(0);
  });
});
