// Cluster builds the way a scheduler runs them: every task a separate process, its index in the
// environment variable Slurm job arrays (SLURM_ARRAY_TASK_ID) or Kubernetes indexed Jobs
// (JOB_COMPLETION_INDEX) set. The assembled build must equal a one-machine `siftpack run` byte for byte.
import { describe, expect, it, beforeAll } from "vitest";
import { readFileSync, writeFileSync, existsSync, readdirSync, mkdirSync, rmSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { parse, stringify } from "yaml";
import { demoCopy, demoPipelineWith, outputFiles, siftpack } from "./cli.js";

interface PlanJson {
  phases: { name: string; tasks: number; summary: string }[];
  workDir: string;
}

/** A copy of the demo pipeline with `tasks` per phase and its own work and output directories. */
const pipelineWith = (dir: string, tasks: number, name: string) => demoPipelineWith(dir, name, tasks);

function planOf(file: string, cwd: string): PlanJson {
  const r = siftpack(["plan", file, "--tasks", "--json"], { cwd });
  expect(r.code, r.stderr).toBe(0);
  return JSON.parse(r.stdout);
}

/** Runs every task of every phase in order, as separate processes; `skip` leaves one task out. */
function runAll(file: string, cwd: string, plan: PlanJson, o: { indexVar: string; skip?: { phase: string; index: number } }): void {
  for (const ph of plan.phases) {
    for (let i = 0; i < ph.tasks; i++) {
      if (o.skip && o.skip.phase === ph.name && o.skip.index === i) continue;
      const r = siftpack(["task", file, "--phase", ph.name, "--workers", "1"], { cwd, env: { [o.indexVar]: String(i) } });
      expect(r.code, `${ph.name} ${i}: ${r.stderr}`).toBe(0);
    }
  }
}

describe("cluster build as separate task processes", () => {
  let dir: string;
  let local: Record<string, string>;
  beforeAll(() => {
    dir = demoCopy();
    const r = siftpack(["run", "pipelines/demo.yaml", "--out", join(dir, "build/local"), "--quiet"], { cwd: dir });
    expect(r.code, r.stderr).toBe(0);
    local = outputFiles(join(dir, "build/local"));
  }, 120_000);

  for (const [tasks, indexVar] of [
    [1, "SLURM_ARRAY_TASK_ID"],
    [3, "SLURM_ARRAY_TASK_ID"],
    [7, "JOB_COMPLETION_INDEX"],
  ] as const) {
    it(`${tasks} task${tasks === 1 ? "" : "s"} per phase give the one-machine build, byte for byte`, () => {
      const file = pipelineWith(dir, tasks, `t${tasks}`);
      const plan = planOf(file, dir);
      expect(plan.phases[0].name).toBe("read");
      expect(plan.phases.at(-1)!.name).toBe("assemble");
      expect(plan.phases.find((p) => p.name === "buckets")!.tasks).toBe(tasks);
      // An entry no task of this build uses: the assemble task prunes the cache as `run` does.
      const cache = join(dir, `build/.t${tasks}.cache`);
      mkdirSync(cache, { recursive: true });
      writeFileSync(join(cache, "read-00000000deadbeef.bin"), "left by another build");
      runAll(file, dir, plan, { indexVar });
      const built = outputFiles(join(dir, `build/t${tasks}`));
      expect(Object.keys(built).sort()).toEqual(Object.keys(local).sort());
      for (const f of Object.keys(local)) expect(built[f], f).toBe(local[f]);
      const kept = readdirSync(cache);
      expect(kept).not.toContain("read-00000000deadbeef.bin");
      expect(kept.filter((n) => n.startsWith("read-")).length).toBeGreaterThan(0);
      expect(kept.filter((n) => /^step-[0-9a-f]{16}\.json$/.test(n)).length).toBeGreaterThan(0);
    }, 300_000);
  }

  it("a phase refuses to start while a task of the phase before is missing, and names it", () => {
    const file = pipelineWith(dir, 3, "gate");
    const plan = planOf(file, dir);
    const r0 = siftpack(["task", file, "--phase", "read", "--index", "0"], { cwd: dir });
    expect(r0.code, r0.stderr).toBe(0);
    const r = siftpack(["task", file, "--phase", "exact-dups", "--index", "0"], { cwd: dir });
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(`task 1 of phase "read" (3 tasks) has not finished`);
    expect(r.stderr).toContain(`--phase read --index 1`);
    const noIndex = siftpack(["task", file, "--phase", "read"], { cwd: dir, env: { SLURM_ARRAY_TASK_ID: "", JOB_COMPLETION_INDEX: "" } });
    expect(noIndex.code).toBe(2);
    expect(noIndex.stderr).toContain("SLURM_ARRAY_TASK_ID");
    const status = siftpack(["status", plan.workDir, "--json"], { cwd: dir });
    expect(status.code, status.stderr).toBe(0);
    const s = JSON.parse(status.stdout) as { phases: { phase: string; tasks: { state: string; error?: string }[] }[] };
    expect(s.phases[0].tasks.map((t) => t.state)).toEqual(["done", "pending", "pending"]);
    expect(s.phases[1].tasks[0].state).toBe("pending");
  }, 120_000);

  it("a task killed mid-way leaves nothing a later phase takes for complete; re-running it gives the same build", () => {
    const file = pipelineWith(dir, 3, "kill");
    const plan = planOf(file, dir);
    // A pass that writes its units' records (one that only collects writes none; src/engine/unit-io.ts, materializes).
    const victim = plan.phases.find((p) => p.name.startsWith("pass-") && p.summary.includes("per unit:"))!.name;
    runAll(file, dir, { ...plan, phases: plan.phases.slice(0, plan.phases.findIndex((p) => p.name === victim)) }, { indexVar: "SLURM_ARRAY_TASK_ID" });
    // Killed (SIGKILL) at its 40th record: the unit file it was writing exists only as a temporary.
    const killed = siftpack(["task", file, "--phase", victim, "--index", "0"], { cwd: dir, env: { SIFTPACK_CRASH_AT: "unit-records:40" } });
    expect(killed.signal).toBe("SIGKILL");
    const units = join(plan.workDir, victim, "units");
    const names = existsSync(units) ? readdirSync(units) : [];
    expect(names.some((n) => /\.tmp-[0-9a-f]{8}$/.test(n))).toBe(true);
    expect(names.filter((n) => n.endsWith(".jsonl"))).toEqual([]);
    for (const i of [1, 2]) expect(siftpack(["task", file, "--phase", victim, "--index", String(i)], { cwd: dir }).code).toBe(0);
    const blocked = siftpack(["task", file, "--phase", "assemble", "--index", "0"], { cwd: dir });
    expect(blocked.code).toBe(1);
    expect(blocked.stderr).toContain(`task 0 of phase "${victim}"`);
    const status = siftpack(["status", plan.workDir], { cwd: dir });
    // Killed on this host: its process is gone, so status knows it stopped without finishing.
    expect(status.stdout).toMatch(new RegExp(`stopped without finishing \\(killed\\?\\): ${victim} task 0 on .*; run it again\n  last log line: \\{.*"phase":"${victim}"`));
    expect(status.stdout).toMatch(new RegExp(`^${victim} +3 +2 +1 +0 +0$`, "m"));
    // The scheduler's retry: the same task again, then the rest.
    expect(siftpack(["task", file, "--phase", victim, "--index", "0"], { cwd: dir }).code).toBe(0);
    expect(readdirSync(units).some((n) => n.includes(".tmp-"))).toBe(false);
    const rest = plan.phases.slice(plan.phases.findIndex((p) => p.name === victim) + 1);
    runAll(file, dir, { ...plan, phases: rest }, { indexVar: "SLURM_ARRAY_TASK_ID" });
    const built = outputFiles(join(dir, "build/kill"));
    for (const f of Object.keys(local)) expect(built[f], f).toBe(local[f]);
  }, 300_000);
});

describe("a large JSONL file read in parts", () => {
  it("parts cut at line boundaries (cluster.unit_mb) give the bytes of reading each file whole", () => {
    const dir = demoCopy();
    // The tickets uncompressed (only plain JSONL is cut): about 90 KB a file, in 10 KB parts.
    for (const name of readdirSync(join(dir, "sample-data/tickets"))) {
      const gz = join(dir, "sample-data/tickets", name);
      writeFileSync(gz.replace(/\.gz$/, ""), gunzipSync(readFileSync(gz)));
      rmSync(gz);
    }
    const demo = join(dir, "pipelines/demo.yaml");
    writeFileSync(demo, readFileSync(demo, "utf8").replace("tickets/*.jsonl.gz", "tickets/*.jsonl"));
    const whole = siftpack(["run", demo, "--out", join(dir, "build/whole"), "--quiet"], { cwd: dir });
    expect(whole.code, whole.stderr).toBe(0);

    const base = parse(readFileSync(demo, "utf8"));
    base.cluster = { tasks: 3, unit_mb: 0.01, work_dir: "../work-parts" };
    base.output.dir = "../build/parts";
    mkdirSync(join(dir, "pipelines-parts"));
    const file = join(dir, "pipelines-parts", "demo.yaml");
    writeFileSync(file, stringify(base));
    const plan = planOf(file, dir) as PlanJson & { units: number };
    // 12 input files, the two ticket files cut into parts: more units than files.
    expect(plan.units).toBeGreaterThan(20);
    runAll(file, dir, plan, { indexVar: "SLURM_ARRAY_TASK_ID" });
    const a = outputFiles(join(dir, "build/whole"));
    const b = outputFiles(join(dir, "build/parts"));
    expect(Object.keys(b).sort()).toEqual(Object.keys(a).sort());
    for (const f of Object.keys(a)) expect(b[f], f).toBe(a[f]);
  }, 300_000);
});
