// A cluster build on this machine against `siftpack run`: the benchmark corpus cut into input files,
// a pipeline with exact and MinHash dedup, line stripping, split, tokenize and pack, built once with
// `run` and once as the task plan's tasks in separate processes (the tasks of a phase side by side,
// as array tasks would run). Prints both times and checks that the builds are byte-identical.
// Every task is timed on its own, which gives the ideal-cluster figure: (sum of all task times) /
// (sum over phases of the phase's longest task), the speed-up of a cluster with one node per task.
//
//   node bench/cluster.js [--mb 50] [--files 12] [--tasks 3] [--parallel 2] [--group-mb 256]
import { mkdirSync, rmSync, writeFileSync, createReadStream, createWriteStream, readFileSync, existsSync } from "node:fs";
import { join } from "node:path";
import { spawn, spawnSync } from "node:child_process";
import { createInterface } from "node:readline";
import { once } from "node:events";
import { fileURLToPath } from "node:url";
import { makeCorpus } from "./corpus.js";
import { sameBuild } from "./same-build.js";

const root = fileURLToPath(new URL("..", import.meta.url));
const args = process.argv.slice(2);
const opt = (name, dflt) => (args.includes(`--${name}`) ? Number(args[args.indexOf(`--${name}`) + 1]) : dflt);
const mb = opt("mb", 50);
const files = opt("files", 12);
const tasks = opt("tasks", 3);
const parallel = opt("parallel", 2);
const groupMb = opt("group-mb", 256);
const bin = join(root, "bin/siftpack.js");
const work = join(root, "build/bench/cluster");
rmSync(work, { recursive: true, force: true });
mkdirSync(join(work, "data"), { recursive: true });

// The corpus, dealt round-robin into `files` JSONL files.
const corpus = await makeCorpus(join(root, "build/bench"), mb);
const outs = Array.from({ length: files }, (_, i) => createWriteStream(join(work, "data", `part-${String(i).padStart(3, "0")}.jsonl`)));
let n = 0;
for await (const line of createInterface({ input: createReadStream(corpus), crlfDelay: Infinity })) {
  if (!line) continue;
  const out = outs[n++ % files];
  if (!out.write(line + "\n")) await once(out, "drain");
}
for (const o of outs) {
  o.end();
  await once(o, "close");
}

const pipeline = (name) => `siftpack: 1
seed: 11
sources:
  - name: docs
    files: ../data/*.jsonl
    format: jsonl
    text: text
    id: id
    meta: [group]
stages:
  - normalize: { form: NFC }
  - filter: { min_words: 5 }
  - dedup: { method: exact }
  - dedup: { method: minhash, threshold: 0.8 }
  - strip_repeated_lines: { min_docs: 50, min_chars: 20 }
  - split: { by: group, holdout: { val: 0.05, test: 0.05 } }
  - tokenize: { encoding: gpt2 }
  - pack: { length: 1024, strategy: best-fit, group_mb: ${groupMb} }
output:
  dir: ../out-${name}
cluster:
  tasks: ${tasks}
  work_dir: ../work-${name}
`;
// Same file name in two directories: the manifest names the pipeline file.
for (const name of ["local", "tasks"]) {
  mkdirSync(join(work, name));
  writeFileSync(join(work, name, "pipeline.yaml"), pipeline(name));
}

const env = { ...process.env, SIFTPACK_LOG: "warn" };
let t0 = performance.now();
const r = spawnSync(process.execPath, [bin, "run", "local/pipeline.yaml", "--quiet", "--no-cache"], { cwd: work, env, encoding: "utf8" });
if (r.status !== 0) throw new Error(`run failed: ${r.stderr}`);
const localSeconds = (performance.now() - t0) / 1000;

const plan = JSON.parse(spawnSync(process.execPath, [bin, "plan", "tasks/pipeline.yaml", "--tasks", "--json"], { cwd: work, encoding: "utf8" }).stdout);
const taskTimes = [];
const task = (phase, index) =>
  new Promise((resolve, reject) => {
    const started = performance.now();
    const p = spawn(process.execPath, [bin, "task", "tasks/pipeline.yaml", "--phase", phase, "--workers", "1", "--no-cache"], { cwd: work, env: { ...env, SLURM_ARRAY_TASK_ID: String(index) }, stdio: ["ignore", "ignore", "pipe"] });
    let err = "";
    p.stderr.on("data", (d) => (err += d));
    p.on("close", (code) => {
      taskTimes.push({ phase, index, seconds: (performance.now() - started) / 1000 });
      if (code === 0) resolve();
      else reject(new Error(`${phase} ${index}: ${err}`));
    });
  });
const phaseSeconds = [];
t0 = performance.now();
for (const ph of plan.phases) {
  const p0 = performance.now();
  const queue = Array.from({ length: ph.tasks }, (_, i) => i);
  await Promise.all(Array.from({ length: Math.min(parallel, ph.tasks) }, async () => {
    while (queue.length) await task(ph.name, queue.shift());
  }));
  phaseSeconds.push([ph.name, ph.tasks, ((performance.now() - p0) / 1000).toFixed(1)]);
}
const taskSeconds = (performance.now() - t0) / 1000;

const differ = !sameBuild(join(work, "out-local"), join(work, "out-tasks"));
const manifest = JSON.parse(readFileSync(join(work, "out-local/manifest.json"), "utf8"));

console.log(`corpus ${mb} MB in ${files} files, ${manifest.records.read} records, ${manifest.records.kept} kept`);
console.log(`siftpack run (one process, all cores):             ${localSeconds.toFixed(1)} s`);
console.log(`task plan, ${tasks} tasks per phase, ${parallel} at a time, 1 thread each: ${taskSeconds.toFixed(1)} s`);
for (const [name, t, s] of phaseSeconds) console.log(`  ${name.padEnd(12)} ${String(t).padStart(3)} task(s) ${s.padStart(7)} s`);
const sum = taskTimes.reduce((a, t) => a + t.seconds, 0);
const longest = plan.phases.reduce((a, ph) => a + Math.max(...taskTimes.filter((t) => t.phase === ph.name).map((t) => t.seconds)), 0);
console.log(`ideal cluster (one node per task): ${sum.toFixed(1)} s of task time / ${longest.toFixed(1)} s of longest tasks = ${(sum / longest).toFixed(1)}×`);
for (const ph of plan.phases) {
  const t = taskTimes.filter((x) => x.phase === ph.name).map((x) => x.seconds);
  console.log(`  ${ph.name.padEnd(12)} ${String(t.length).padStart(3)} task(s)  sum ${t.reduce((a, b) => a + b, 0).toFixed(1).padStart(6)} s  longest ${Math.max(...t).toFixed(1).padStart(5)} s`);
}
console.log(differ ? "builds DIFFER" : "builds identical, file for file");
if (existsSync(join(root, "build/bench"))) writeFileSync(join(root, "build/bench/cluster.json"), JSON.stringify({ mb, files, tasks, parallel, groupMb, localSeconds, taskSeconds, phases: phaseSeconds, idealClusterSpeedup: sum / longest, taskTimes, identical: !differ }, null, 2) + "\n");
process.exit(differ ? 1 : 0);
