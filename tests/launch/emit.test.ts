// Launch files for Slurm and Kubernetes: directives against the README's list, chaining, shell quoting, manifests.
import { describe, expect, it } from "vitest";
import { spawnSync } from "node:child_process";
import { chmodSync, existsSync, mkdtempSync, readFileSync, readdirSync, statSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import fc from "fast-check";
import { parse } from "yaml";
import { SiftpackError } from "../../src/errors.js";
import { SBATCH_OPTIONS, slurmFiles, type SlurmOptions } from "../../src/launch/emit-slurm.js";
import { kubernetesFiles, type KubernetesOptions } from "../../src/launch/emit-kubernetes.js";
import { shellCommand, writeLaunchFiles, type LaunchFile } from "../../src/launch/launch-file.js";
import type { TaskPlan } from "../../src/engine/plan-types.js";

const ROOT = resolve(import.meta.dirname, "../..");

/** A pipeline path a shell would split or cut short if it were not quoted. */
const AWKWARD_PIPELINE = "/srv/depot/pipelines/north yard's tickets.yaml";

function depotPlan(workDir = "/srv/depot/.tickets.work", pipeline = AWKWARD_PIPELINE): TaskPlan {
  return {
    pipeline,
    workDir,
    outDir: "/srv/depot/tickets",
    phases: [
      { name: "read", tasks: 3, summary: "per input file: read, map, normalize, filter" },
      { name: "exact-dups", tasks: 1, summary: "one task: the first of every group of equal texts" },
      { name: "buckets", tasks: 3, summary: "per bucket partition: candidate pairs from shared band buckets" },
      { name: "clusters", tasks: 1, summary: "one task: near-duplicate clusters" },
      { name: "whole-1", tasks: 1, summary: "one task: split, decontaminate" },
      { name: "assemble", tasks: 1, summary: "one task: ledger, packing,\nshards, manifest" },
    ],
  };
}

const slurmOptions: SlurmOptions = { command: ["node", "/opt/siftpack/bin/siftpack.js"], cpusPerTask: 4 };

const k8sOptions: KubernetesOptions = {
  command: ["node", "/opt/siftpack/bin/siftpack.js"],
  image: "registry.depot.example/siftpack:0.1",
  claim: "depot-work",
  mountPath: "/srv/depot",
  parallelism: 2,
  cpu: "2",
  waitTimeout: "6h",
};

function tempDir(prefix: string): string {
  return mkdtempSync(join(tmpdir(), `siftpack-${prefix}-`));
}

function byName(files: LaunchFile[], name: string): LaunchFile {
  const f = files.find((x) => x.name === name);
  if (!f) throw new Error(`no launch file ${name} among ${files.map((x) => x.name).join(", ")}`);
  return f;
}

/** `bash -n` and `sh -n` (dash on Debian): the script parses in both shells. */
function expectShellSyntaxOk(content: string): void {
  const dir = tempDir("syntax");
  const file = join(dir, "script.sh");
  writeFileSync(file, content);
  for (const shell of ["bash", "sh"]) {
    const r = spawnSync(shell, ["-n", file], { encoding: "utf8" });
    expect(r.stderr, `${shell} -n`).toBe("");
    expect(r.status, `${shell} -n`).toBe(0);
  }
}

/** The options the README's cluster section lists as `- \`--option…\`` items. */
function readmeSbatchOptions(): string[] {
  const readme = readFileSync(join(ROOT, "README.md"), "utf8");
  const start = readme.indexOf("\n## Running on a cluster\n");
  expect(start, "README has a section ## Running on a cluster").toBeGreaterThan(0);
  const end = readme.indexOf("\n## ", start + 1);
  const section = readme.slice(start, end < 0 ? undefined : end);
  return [...section.matchAll(/^- `(--[a-z][a-z-]*)/gm)].map((m) => m[1]);
}

/** Writes files and a fake command (`name`) into a fresh folder; returns the folder, a PATH and the call log. */
function fakeCommand(name: string, script: string): { bin: string; log: string; env: NodeJS.ProcessEnv } {
  const bin = tempDir(`fake-${name}`);
  const log = join(bin, "calls.log");
  writeFileSync(join(bin, name), script);
  chmodSync(join(bin, name), 0o755);
  return { bin, log, env: { ...process.env, PATH: `${bin}:${process.env.PATH}`, FAKE_LOG: log } };
}

function calls(log: string): string[][] {
  if (!existsSync(log)) return [];
  return readFileSync(log, "utf8")
    .split("\n")
    .filter((l) => l !== "")
    .map((l) => l.split("\t"));
}

// Prints its arguments, one call per line, tab-separated; answers like `sbatch --parsable` (sbatch(1):
// "jobid" or "jobid;cluster"), the first time with a cluster name to check that it is cut off.
const FAKE_SBATCH = `#!/bin/sh
n=$(cat "$FAKE_LOG.n" 2>/dev/null || echo 1000)
n=$((n + 1))
echo "$n" > "$FAKE_LOG.n"
(IFS='	'; printf '%s\\n' "$*") >> "$FAKE_LOG"
if [ "$n" = 1001 ]; then echo "$n;depot-cluster"; else echo "$n"; fi
`;

describe("slurmFiles", () => {
  const plan = depotPlan();
  const files = slurmFiles(plan, slurmOptions);
  const scripts = files.filter((f) => f.name.endsWith(".sbatch"));

  it("writes one script per phase in phase order and an executable submit.sh", () => {
    expect(files.map((f) => f.name)).toEqual([
      "01-read.sbatch",
      "02-exact-dups.sbatch",
      "03-buckets.sbatch",
      "04-clusters.sbatch",
      "05-whole-1.sbatch",
      "06-assemble.sbatch",
      "submit.sh",
    ]);
    expect(files.filter((f) => f.executable).map((f) => f.name)).toEqual(["submit.sh"]);
  });

  it("the README lists exactly the sbatch options the code uses", () => {
    expect([...readmeSbatchOptions()].sort()).toEqual([...SBATCH_OPTIONS].sort());
  });

  it("every #SBATCH line is --option=value with an option the README documents, before the first command", () => {
    const documented = new Set(readmeSbatchOptions());
    for (const s of scripts) {
      const lines = s.content.split("\n");
      expect(lines[0]).toBe("#!/bin/sh");
      // sbatch(1), Slurm 22.05: directives after the first non-comment, non-blank line are ignored.
      const firstCommand = lines.findIndex((l) => l.trim() !== "" && !l.startsWith("#"));
      const directives = lines.map((l, i) => ({ l, i })).filter(({ l }) => l.startsWith("#SBATCH"));
      expect(directives.length).toBeGreaterThan(0);
      for (const { l, i } of directives) {
        expect(i).toBeLessThan(firstCommand);
        const m = /^#SBATCH (--[a-z][a-z-]*)=(\S+)$/.exec(l);
        expect(m, l).not.toBeNull();
        expect(documented.has(m![1]), `${m![1]} in the README`).toBe(true);
      }
    }
  });

  it("array ranges, job names, log paths and CPUs follow the plan", () => {
    plan.phases.forEach((phase, i) => {
      const d = directivesOf(scripts[i].content);
      expect(d.get("--job-name")).toBe(`siftpack-${phase.name}`);
      expect(arrayIndexes(d.get("--array")!)).toEqual([...Array(phase.tasks).keys()]);
      expect(d.get("--output")).toBe("/srv/depot/.tickets.work/logs/slurm/%x-%a.out");
      expect(d.get("--cpus-per-task")).toBe("4");
      expect(d.get("--kill-on-invalid-dep")).toBe("yes");
      expect(d.has("--partition") || d.has("--time") || d.has("--mem")).toBe(false);
    });
  });

  it("writes --partition, --time and --mem only when given", () => {
    const withAll = slurmFiles(plan, { ...slurmOptions, partition: "depot-batch", time: "4:00:00", mem: "16G" });
    const d = directivesOf(withAll[0].content);
    expect([d.get("--partition"), d.get("--time"), d.get("--mem")]).toEqual(["depot-batch", "4:00:00", "16G"]);
  });

  it("a literal % in the work directory is written %% (sbatch(1), filename pattern)", () => {
    const d = directivesOf(slurmFiles(depotPlan("/srv/depot/100%.work"), slurmOptions)[0].content);
    expect(d.get("--output")).toBe("/srv/depot/100%%.work/logs/slurm/%x-%a.out");
  });

  it("scripts and submit.sh pass bash -n and sh -n", () => {
    for (const f of files) expectShellSyntaxOk(f.content);
  });

  it("the task command keeps a pipeline path with a space and a quote whole", () => {
    // Run the generated script itself, with a command that prints the arguments it was given.
    const dir = tempDir("argv it's");
    const printer = join(dir, "print args.mjs");
    writeFileSync(printer, "console.log(JSON.stringify(process.argv.slice(2)));\n");
    const [read] = slurmFiles(plan, { ...slurmOptions, command: [process.execPath, printer] });
    const script = join(dir, read.name);
    writeFileSync(script, read.content);
    const r = spawnSync("sh", [script], { encoding: "utf8" });
    expect(r.stderr).toBe("");
    expect(JSON.parse(r.stdout)).toEqual(["task", AWKWARD_PIPELINE, "--phase", "read"]);
  });

  it("submit.sh chains every phase on the one before with --dependency=afterok, in phase order", () => {
    const submit = byName(files, "submit.sh").content;
    expect(submit).toContain("--dependency=afterok:");
    const order = [...submit.matchAll(/^submit (\d+) '?([^'\s]+)'?$/gm)].map((m) => m[2]);
    expect(order).toEqual(scripts.map((s) => s.name));
  });

  it("submit.sh, run against a stand-in sbatch, submits in order with each job's id as the next one's dependency", async () => {
    const work = tempDir("slurm-work");
    const launch = join(tempDir("slurm"), "launch files");
    const written = await writeLaunchFiles(launch, slurmFiles(depotPlan(work), slurmOptions));
    const fake = fakeCommand("sbatch", FAKE_SBATCH);
    const r = spawnSync(join(launch, "submit.sh"), [], { encoding: "utf8", env: fake.env, cwd: tmpdir() });
    expect(r.stderr).toBe("");
    expect(r.status).toBe(0);
    expect(existsSync(join(work, "logs/slurm"))).toBe(true);
    const c = calls(fake.log);
    const sbatchFiles = written.filter((p) => p.endsWith(".sbatch"));
    expect(c).toEqual(
      sbatchFiles.map((path, i) => (i === 0 ? ["--parsable", path] : ["--parsable", `--dependency=afterok:${1001 + i - 1}`, path])),
    );
    // The ids printed are plain job ids, and the hint names the work directory.
    expect(r.stdout).toContain("submitted 01-read.sbatch as job 1001\n");
    expect(r.stdout).toContain("submitted 06-assemble.sbatch as job 1006\n");
    expect(r.stdout).toContain(`status ${work}`);
  });

  it("submit.sh FIRST starts at that phase without a dependency; a FIRST out of range is a usage error", async () => {
    const launch = tempDir("slurm-first");
    const written = await writeLaunchFiles(launch, slurmFiles(depotPlan(tempDir("slurm-work")), slurmOptions));
    const fake = fakeCommand("sbatch", FAKE_SBATCH);
    const r = spawnSync(join(launch, "submit.sh"), ["03"], { encoding: "utf8", env: fake.env });
    expect(r.status).toBe(0);
    const c = calls(fake.log);
    expect(c.map((args) => args.at(-1))).toEqual(written.filter((p) => p.endsWith(".sbatch")).slice(2));
    expect(c[0]).toEqual(["--parsable", join(launch, "03-buckets.sbatch")]);
    expect(c[1]).toEqual(["--parsable", "--dependency=afterok:1001", join(launch, "04-clusters.sbatch")]);
    for (const bad of ["7", "0", "x"]) {
      const u = spawnSync(join(launch, "submit.sh"), [bad], { encoding: "utf8", env: fake.env });
      expect(u.status, `submit.sh ${bad}`).toBe(2);
    }
    expect(calls(fake.log)).toHaveLength(4);
  });

  it("a phase of one task is still an array (index 0), so SLURM_ARRAY_TASK_ID is set", () => {
    const d = directivesOf(slurmFiles(depotPlan(), slurmOptions)[1].content);
    expect(d.get("--array")).toBe("0");
  });

  it("refuses values an #SBATCH line cannot carry, with SP_USAGE", () => {
    expect(usageError(() => slurmFiles(depotPlan("/srv/depot/north yard.work"), slurmOptions))).toMatch(/work directory/);
    expect(usageError(() => slurmFiles(plan, { ...slurmOptions, partition: "depot batch" }))).toMatch(/partition/);
    expect(usageError(() => slurmFiles(plan, { ...slurmOptions, cpusPerTask: 0 }))).toMatch(/CPUs per task/);
    expect(usageError(() => slurmFiles(plan, { ...slurmOptions, command: [] }))).toMatch(/command/);
  });
});

describe("kubernetesFiles", () => {
  const plan = depotPlan();
  const files = kubernetesFiles(plan, k8sOptions);
  const manifests = files.filter((f) => f.name.endsWith(".yaml"));

  it("writes one manifest per phase in phase order and an executable submit.sh", () => {
    expect(files.map((f) => f.name)).toEqual([
      "01-read.yaml",
      "02-exact-dups.yaml",
      "03-buckets.yaml",
      "04-clusters.yaml",
      "05-whole-1.yaml",
      "06-assemble.yaml",
      "submit.sh",
    ]);
    expect(files.filter((f) => f.executable).map((f) => f.name)).toEqual(["submit.sh"]);
  });

  it("every manifest is an Indexed batch/v1 Job with the phase's tasks, the claim and the mount", () => {
    plan.phases.forEach((phase, i) => {
      // Kubernetes batch/v1 Job API (from memory): the fields below, JOB_COMPLETION_INDEX set by Indexed mode.
      const job = parse(manifests[i].content);
      expect(manifests[i].content, "no YAML anchors or aliases").not.toMatch(/[&*][a-z]\w*$/m);
      expect(job.apiVersion).toBe("batch/v1");
      expect(job.kind).toBe("Job");
      expect(job.metadata.name).toBe(`siftpack-0${i + 1}-${phase.name}`);
      expect(job.metadata.name).toMatch(/^[a-z0-9]([-a-z0-9]*[a-z0-9])?$/);
      expect(job.metadata.name.length).toBeLessThanOrEqual(63);
      expect(job.spec.completionMode).toBe("Indexed");
      expect(job.spec.completions).toBe(phase.tasks);
      expect(job.spec.parallelism).toBe(Math.min(phase.tasks, 2));
      expect(job.spec.backoffLimit).toBe(3);
      expect(job.spec).not.toHaveProperty("backoffLimitPerIndex");
      const pod = job.spec.template.spec;
      expect(pod.restartPolicy).toBe("Never");
      expect(pod.containers).toHaveLength(1);
      const [c] = pod.containers;
      expect(c.image).toBe(k8sOptions.image);
      expect(c.command).toEqual(["node", "/opt/siftpack/bin/siftpack.js", "task", AWKWARD_PIPELINE, "--phase", phase.name]);
      expect(c.resources).toEqual({ requests: { cpu: "2" } });
      expect(pod.volumes).toEqual([{ name: "work", persistentVolumeClaim: { claimName: "depot-work" } }]);
      expect(c.volumeMounts).toEqual([{ name: "work", mountPath: "/srv/depot" }]);
    });
  });

  it("job names are DNS-1123 labels even when phase names are not", () => {
    const odd = { ...plan, phases: [{ name: "Whole_Stream", tasks: 1, summary: "one task" }] };
    const job = parse(kubernetesFiles(odd, k8sOptions)[0].content);
    expect(job.metadata.name).toBe("siftpack-01-whole-stream");
    expect(job.spec.template.spec.containers[0].command.at(-1)).toBe("Whole_Stream");
  });

  it("submit.sh passes bash -n and sh -n, and applies then waits for each phase in order", () => {
    const submit = byName(files, "submit.sh").content;
    expectShellSyntaxOk(submit);
    expect(submit).toContain('kubectl apply -f "$here/$2"');
    expect(submit).toContain('kubectl wait --for=condition=Complete --timeout="$timeout" "job/$1"');
    expect(submit).toContain("timeout=6h");
    const order = [...submit.matchAll(/^run_phase (\d+) '?([^'\s]+)'? '?([^'\s]+)'?$/gm)].map((m) => [m[2], m[3]]);
    expect(order).toEqual(manifests.map((m, i) => [m.name, parse(m.content).metadata.name]));
  });

  it("submit.sh, run against a stand-in kubectl, runs every phase in order and stops at a failed one", async () => {
    const launch = join(tempDir("k8s"), "launch files");
    await writeLaunchFiles(launch, files);
    // Completes every Job at once, except FAIL_JOB, which fails; the waiter for the other outcome waits on.
    const fake = fakeCommand(
      "kubectl",
      `#!/bin/sh
(IFS='	'; printf '%s\\n' "$*") >> "$FAKE_LOG"
[ "$1" = wait ] || exit 0
job=; cond=
for a in "$@"; do
  case $a in job/*) job=\${a#job/} ;; --for=condition=*) cond=\${a#--for=condition=} ;; esac
done
if [ "$job" = "\${FAIL_JOB:-}" ]; then want=Failed; else want=Complete; fi
[ "$cond" = "$want" ] && exit 0
exec sleep 30
`,
    );
    const ok = spawnSync(join(launch, "submit.sh"), [], { encoding: "utf8", env: fake.env });
    expect(ok.stderr).toBe("");
    expect(ok.status).toBe(0);
    const names = manifests.map((m) => parse(m.content).metadata.name as string);
    const steps = calls(fake.log).filter((c) => c[0] !== "wait");
    expect(steps).toEqual(
      manifests.flatMap((m, i) => [
        ["delete", "job", names[i], "--ignore-not-found"],
        ["apply", "-f", join(launch, m.name)],
      ]),
    );
    const waits = calls(fake.log).filter((c) => c[0] === "wait");
    for (const name of names) expect(waits).toContainEqual(["wait", "--for=condition=Complete", "--timeout=6h", `job/${name}`]);
    expect(ok.stdout).toContain("status /srv/depot/.tickets.work");

    const failing = fakeCommand("kubectl", readFileSync(join(fake.bin, "kubectl"), "utf8"));
    const bad = spawnSync(join(launch, "submit.sh"), [], { encoding: "utf8", env: { ...failing.env, FAIL_JOB: names[2] } });
    expect(bad.status).toBe(1);
    expect(bad.stderr).toContain(`job/${names[2]} did not complete`);
    const applied = calls(failing.log).filter((c) => c[0] === "apply").map((c) => c[2]);
    expect(applied).toEqual(manifests.slice(0, 3).map((m) => join(launch, m.name)));
  }, 60_000);

  it("refuses plan paths outside the mount and malformed options, with SP_USAGE", () => {
    expect(usageError(() => kubernetesFiles(depotPlan("/scratch/.tickets.work"), k8sOptions))).toMatch(/work directory .* not under the mount/);
    expect(usageError(() => kubernetesFiles(depotPlan(undefined, "/home/ops/tickets.yaml"), k8sOptions))).toMatch(/pipeline file/);
    expect(usageError(() => kubernetesFiles(plan, { ...k8sOptions, mountPath: "/srv/dep" }))).toMatch(/not under the mount/);
    expect(usageError(() => kubernetesFiles(plan, { ...k8sOptions, claim: "Depot Work" }))).toMatch(/claim/);
    expect(usageError(() => kubernetesFiles(plan, { ...k8sOptions, cpu: "two" }))).toMatch(/CPU/);
    expect(usageError(() => kubernetesFiles(plan, { ...k8sOptions, waitTimeout: "6 hours" }))).toMatch(/timeout/);
    expect(usageError(() => kubernetesFiles(plan, { ...k8sOptions, parallelism: 0 }))).toMatch(/parallelism/);
    // A mount with a trailing slash is the same mount.
    expect(() => kubernetesFiles(plan, { ...k8sOptions, mountPath: "/srv/depot/" })).not.toThrow();
  });
});

describe("writeLaunchFiles", () => {
  it("writes every file under its name, submit.sh with mode 0755, and leaves no temporary files", async () => {
    const dir = join(tempDir("write"), "new", "launch");
    const files = slurmFiles(depotPlan(), slurmOptions);
    const paths = await writeLaunchFiles(dir, files);
    expect(paths).toEqual(files.map((f) => join(dir, f.name)));
    expect(readdirSync(dir).sort()).toEqual(files.map((f) => f.name).sort());
    for (const f of files) expect(readFileSync(join(dir, f.name), "utf8")).toBe(f.content);
    expect(statSync(join(dir, "submit.sh")).mode & 0o777).toBe(0o755);
    expect(statSync(join(dir, "01-read.sbatch")).mode & 0o111).toBe(0);
    // Writing again replaces the files in place.
    await writeLaunchFiles(dir, files);
    expect(readdirSync(dir).sort()).toEqual(files.map((f) => f.name).sort());
  });

  it("refuses a name with a folder in it", async () => {
    await expect(writeLaunchFiles(tempDir("write-bad"), [{ name: "../submit.sh", content: "" }])).rejects.toThrow(/bare file name/);
  });

  it("reports an unwritable folder as SP_OUTPUT", async () => {
    const file = join(tempDir("write-file"), "plain-file");
    writeFileSync(file, "");
    await expect(writeLaunchFiles(join(file, "launch"), [{ name: "submit.sh", content: "" }])).rejects.toMatchObject({ code: "SP_OUTPUT" });
  });
});

describe("shellCommand", () => {
  it("sh splits the quoted line back into exactly the words given", () => {
    // One sh run for many generated words: printf prints each argument followed by a NUL byte.
    const words = fc.sample(fc.string({ unit: "binary", maxLength: 12 }).filter((w) => !w.includes("\0")), { numRuns: 300, seed: 7 });
    words.push("", "'", "''", "a b", "it's", "$HOME", "`id`", "*", "~", "-n", "a\nb", "\\", '"');
    const r = spawnSync("sh", ["-c", `printf '%s\\0' ${shellCommand(words)}`], { encoding: "utf8" });
    expect(r.stderr).toBe("");
    expect(r.stdout.split("\0").slice(0, -1)).toEqual(words);
  });
});

function directivesOf(script: string): Map<string, string> {
  const d = new Map<string, string>();
  for (const m of script.matchAll(/^#SBATCH (--[a-z-]+)=(\S+)$/gm)) d.set(m[1], m[2]);
  return d;
}

/** The indexes an --array value stands for: a list of values and ranges (sbatch(1)). */
function arrayIndexes(spec: string): number[] {
  return spec.split(",").flatMap((part) => {
    const [lo, hi = lo] = part.split("-").map(Number);
    return Array.from({ length: hi - lo + 1 }, (_, k) => lo + k);
  });
}

function usageError(f: () => unknown): string {
  try {
    f();
  } catch (e) {
    if (e instanceof SiftpackError && e.code === "SP_USAGE") return e.message;
    throw e;
  }
  throw new Error("expected SP_USAGE");
}
