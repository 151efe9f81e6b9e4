// The benchmark suite (`npm run bench`, never part of `npm test`): per-stage throughput on one
// thread, our tokenizer against the reference in the same run, the whole pipeline on 1 and all
// workers, and peak memory at two corpus sizes. Prints a table and writes build/bench/results.json.
//
//   node bench/run.js [--small-mb 50] [--large-mb 200] [--skip-minhash] [--skip-cluster]
import { readFileSync, writeFileSync, mkdirSync, rmSync, renameSync } from "node:fs";
import { join } from "node:path";
import { spawnSync } from "node:child_process";
import { availableParallelism } from "node:os";
import { fileURLToPath } from "node:url";
import { makeCorpus } from "./corpus.js";
import { sameBuild } from "./same-build.js";

const root = fileURLToPath(new URL("..", import.meta.url));
const args = process.argv.slice(2);
const opt = (name, dflt) => (args.includes(`--${name}`) ? Number(args[args.indexOf(`--${name}`) + 1]) : dflt);
const flag = (name) => args.includes(`--${name}`);
const work = join(root, "build/bench");
mkdirSync(work, { recursive: true });

const lib = await import(new URL("../dist/index.js", import.meta.url).href);
const { loadHasher, xxh64String } = await import(new URL("../dist/lib/hash.js", import.meta.url).href);
const { get_encoding } = await import("tiktoken");
await loadHasher();

const smallMb = opt("small-mb", 50);
const largeMb = opt("large-mb", 200);
console.log(`building corpora from /usr/share/doc/*/copyright and /usr/share/common-licenses: ${smallMb} MB and ${largeMb} MB …`);
const small = await makeCorpus(work, smallMb);
const large = await makeCorpus(work, largeMb);

const texts = readFileSync(small, "utf8")
  .split("\n")
  .filter(Boolean)
  .map((l) => JSON.parse(l).text);
const mb = (arr) => arr.reduce((a, t) => a + Buffer.byteLength(t), 0) / 1e6;
const totalMb = mb(texts);

function time(fn) {
  const t0 = performance.now();
  fn();
  return (performance.now() - t0) / 1000;
}

const rows = [];
const results = { machine: { cores: availableParallelism(), node: process.version }, stages: {}, tokenizer: {}, pipeline: {}, memory: {} };

// Per stage, one thread, in-process on the small corpus.
const norm = lib.STAGES.normalize.options.check({}, [], []);
let normalized;
const tNorm = time(() => (normalized = texts.map((t) => lib.normalizeText(t, norm))));
const filt = lib.STAGES.filter.options.check({ min_words: 5 }, [], []);
const tFilt = time(() => normalized.forEach((t) => lib.filterReason(t, filt)));
const tHash = time(() => normalized.forEach((t) => xxh64String(t)));
for (const [name, sec] of [["normalize (NFKC + clean-up)", tNorm], ["filter (length bounds)", tFilt], ["dedup exact (xxh64)", tHash]]) {
  results.stages[name] = { mb_s: totalMb / sec, records_s: texts.length / sec };
  rows.push([name, (totalMb / sec).toFixed(1), Math.round(texts.length / sec), ""]);
}

// Tokenizers: ours against tiktoken (WASM build of the reference), encode_ordinary, same texts.
const sample = normalized.slice(0, Math.ceil(normalized.length / 3));
const sampleMb = mb(sample);
for (const name of ["gpt2", "cl100k_base", "o200k_base"]) {
  const ours = lib.loadEncoding(name);
  let ourTokens = 0;
  const tOurs = time(() => sample.forEach((t) => (ourTokens += ours.encode(t).length)));
  const ref = get_encoding(name);
  let refTokens = 0;
  const tRef = time(() => sample.forEach((t) => (refTokens += ref.encode_ordinary(t).length)));
  ref.free();
  if (ourTokens !== refTokens) throw new Error(`${name}: token counts differ (${ourTokens} vs ${refTokens})`);
  results.tokenizer[name] = { ours_mb_s: sampleMb / tOurs, ours_tokens_s: ourTokens / tOurs, tiktoken_mb_s: sampleMb / tRef, ratio: tRef / tOurs };
  rows.push([`tokenize ${name}`, (sampleMb / tOurs).toFixed(1), Math.round(ourTokens / tOurs) + " tok/s", `${(tRef / tOurs).toFixed(1)}× tiktoken (${(sampleMb / tRef).toFixed(1)} MB/s)`]);
}

// Whole pipelines through the CLI, as a user runs them; peak RSS from the process itself.
function pipelineFile(name, corpus, stages) {
  const p = join(work, `${name}.yaml`);
  writeFileSync(
    p,
    `siftpack: 1\nseed: 1\nsources: [{ name: bench, files: "${corpus}", format: jsonl, id: id, meta: [group] }]\nstages:\n${stages
      .map((s) => `  - ${s}`)
      .join("\n")}\noutput: { dir: out-${name} }\n`,
  );
  return p;
}
const full = ["normalize: {}", "filter: { min_words: 5 }", "dedup: { method: exact }", "split: { by: group, holdout: { val: 0.1, test: 0.1 } }", "tokenize: { encoding: gpt2 }", "pack: { length: 2048, strategy: best-fit }"];
const tokOnly = ["tokenize: { encoding: gpt2 }", "pack: { length: 2048, strategy: concat, shuffle: false }"];
// A child process per run, so each has its own peak RSS (worker threads included).
const runner = join(work, "run-one.mjs");
writeFileSync(
  runner,
  `const { main } = await import(${JSON.stringify(new URL("../dist/cli/main.js", import.meta.url).href)});
const t0 = performance.now();
const rc = await main(["run", process.argv[2], "--workers", process.argv[3], ...(process.argv[4] === "again" ? [] : ["--no-cache"]), "--json"]);
const cpu = process.cpuUsage();
process.stderr.write("\\nBENCH " + JSON.stringify({ rc, sec: (performance.now() - t0) / 1000, cpu_sec: (cpu.user + cpu.system) / 1e6, rss_mb: process.resourceUsage().maxRSS / 1024 }) + "\\n");
`,
);
/** `again`: the cache on, and the build must be found up to date; `"cache"`: the cache on. */
function run(pipeline, workers, again = false) {
  const r = spawnSync(process.execPath, [runner, pipeline, String(workers), ...(again ? ["again"] : [])], { encoding: "utf8", env: { ...process.env, SIFTPACK_LOG: "warn" }, maxBuffer: 1 << 26 });
  const line = r.stderr.split("\n").find((l) => l.startsWith("BENCH "));
  if (!line) throw new Error(`pipeline run failed: ${r.stderr}`);
  const res = JSON.parse(line.slice(6));
  if (res.rc !== 0) throw new Error(`pipeline run exited ${res.rc}: ${r.stderr}`);
  if (again === true && !/"up_to_date": true/.test(r.stdout)) throw new Error(`the unchanged rebuild built again: ${r.stderr}`);
  if (again === "cache") res.cache = JSON.parse(r.stdout).cache;
  return res;
}
const cores = availableParallelism();
const largeInputMb = readFileSync(large).length / 1e6;
const p1 = run(pipelineFile("full", large, full), 1);
// Demo-shaped means held-out splits too: without them the overlap figures would have nothing to compare.
// (Before 2026-12-05 the holdouts were 0.02 of the corpus's 50 groups, and no group fell in them.)
const fullSplits = Object.keys(JSON.parse(readFileSync(join(work, "out-full", "manifest.json"), "utf8")).splits);
if (!fullSplits.includes("val") || !fullSplits.includes("test")) throw new Error(`the full pipeline built only ${fullSplits.join(", ")}: the bench needs held-out splits`);
const pN = run(pipelineFile("full", large, full), cores);
// The same build again with nothing changed (README, Rebuilding in CI): answered from hashes.
const same = run(pipelineFile("full", large, full), cores, true);
const tok1 = run(pipelineFile("tok", large, tokOnly), 1);
// Appending about 1 % (README, Rebuilding in CI): the large corpus as 8 files, built with the cache
// on; then a ninth file of new documents (made the corpus's way, with ids and groups of their own)
// and the build again. With near-duplicate removal, as a corpus that grows by exports has.
const appendDir = join(work, "append");
rmSync(appendDir, { recursive: true, force: true });
mkdirSync(appendDir, { recursive: true });
{
  const lines = readFileSync(large, "utf8").split("\n").filter(Boolean);
  const per = Math.ceil(lines.length / 8);
  for (let i = 0; i < 8; i++) writeFileSync(join(appendDir, `part-${i}.jsonl`), lines.slice(i * per, (i + 1) * per).join("\n") + "\n");
}
const fullNear = ["normalize: {}", "filter: { min_words: 5 }", "dedup: { method: exact }", "dedup: { method: minhash, threshold: 0.8 }", "split: { by: group, holdout: { val: 0.1, test: 0.1 } }", "tokenize: { encoding: gpt2 }", "pack: { length: 2048, strategy: best-fit }"];
const appendPipeline = pipelineFile("append", join(appendDir, "*.jsonl"), fullNear);
const appendFirst = run(appendPipeline, cores, "cache");
const extraMb = Math.max(1, Math.round(largeMb / 100));
const extraLines = readFileSync(await makeCorpus(join(work, "append-extra"), extraMb), "utf8")
  .split("\n")
  .filter(Boolean)
  .map((l) => {
    const r = JSON.parse(l);
    return JSON.stringify({ ...r, id: `new-${r.id}`, group: `new-${r.group}` });
  });
writeFileSync(join(appendDir, "part-8.jsonl"), extraLines.join("\n") + "\n");
const appendAgain = run(appendPipeline, cores, "cache");
const appendedMb = readFileSync(join(appendDir, "part-8.jsonl")).length / 1e6;
// The rebuild must be a clean build's bytes: set aside, the same pipeline built again without the
// cache, compared file for file.
const kept = join(work, "out-append-rebuilt");
rmSync(kept, { recursive: true, force: true });
renameSync(join(work, "out-append"), kept);
run(appendPipeline, cores);
const appendSame = sameBuild(kept, join(work, "out-append"));
if (!appendSame) throw new Error("the rebuild after the append differs from a clean build of the same files (build/bench/out-append-rebuilt, build/bench/out-append)");
const appendResult = { first_s: appendFirst.sec, appended_mb: appendedMb, appended_share: appendedMb / largeInputMb, rebuild_s: appendAgain.sec, share_of_first: appendAgain.sec / appendFirst.sec, steps: appendAgain.cache.steps, identical_to_clean: appendSame };
rows.push([
  `append ${((100 * appendedMb) / largeInputMb).toFixed(1)} % to a ${largeInputMb.toFixed(0)} MB build (with MinHash)`,
  "",
  "",
  `${appendAgain.sec.toFixed(1)} s = ${((100 * appendAgain.sec) / appendFirst.sec).toFixed(0)} % of its first build (${appendFirst.sec.toFixed(1)} s); ${appendAgain.cache.steps.reused} of ${appendAgain.cache.steps.reused + appendAgain.cache.steps.computed} later steps reused; identical to a clean build`,
]);
rmSync(appendDir, { recursive: true, force: true });
rmSync(join(work, "out-append"), { recursive: true, force: true });
rmSync(kept, { recursive: true, force: true });
rmSync(join(work, ".out-append.cache"), { recursive: true, force: true });
results.pipeline = {
  input_mb: largeInputMb,
  full_1_worker_mb_s: largeInputMb / p1.sec,
  [`full_${cores}_workers_mb_s`]: largeInputMb / pN.sec,
  scaling: p1.sec / pN.sec,
  tokenize_only_1_worker_mb_s: largeInputMb / tok1.sec,
  full_vs_tokenize_only: tok1.sec / p1.sec,
  append: appendResult,
};
rows.push([`pipeline, 1 worker (${largeInputMb.toFixed(0)} MB)`, (largeInputMb / p1.sec).toFixed(1), "", `${p1.sec.toFixed(1)} s`]);
rows.push([`pipeline, ${cores} workers`, (largeInputMb / pN.sec).toFixed(1), "", `${(p1.sec / pN.sec).toFixed(2)}× one worker`]);
// CPU time (every thread of the process: V8's garbage collector, libuv's file and gzip threads) per
// second: one worker already keeps more than one core busy, which bounds what N workers can gain.
results.pipeline.full_1_worker_cores = p1.cpu_sec / p1.sec;
results.pipeline[`full_${cores}_workers_cores`] = pN.cpu_sec / pN.sec;
results.pipeline.scaling_bound = cores / (p1.cpu_sec / p1.sec);
rows.push(["cores busy: 1 worker / N workers", "", "", `${(p1.cpu_sec / p1.sec).toFixed(2)} / ${(pN.cpu_sec / pN.sec).toFixed(2)} (so at most ${(cores / (p1.cpu_sec / p1.sec)).toFixed(2)}× with ${cores} cores)`]);
results.pipeline.unchanged_rebuild_s = same.sec;
results.pipeline.unchanged_rebuild_share = same.sec / pN.sec;
rows.push(["the same build again, nothing changed", "", "", `${same.sec.toFixed(2)} s = ${((100 * same.sec) / pN.sec).toFixed(1)} % of the build`]);
rows.push(["tokenize-only pipeline, 1 worker", (largeInputMb / tok1.sec).toFixed(1), "", `full pipeline at ${((100 * tok1.sec) / p1.sec).toFixed(0)} % of it`]);
// The encoder's own speed in this process (gpt2, above) against the build that does little else.
const encoderMbS = results.tokenizer.gpt2.ours_mb_s;
results.pipeline.tokenize_only_vs_encoder = largeInputMb / tok1.sec / encoderMbS;
rows.push(["tokenize-only build vs the encoder in-process", "", "", `${((100 * largeInputMb) / tok1.sec / encoderMbS).toFixed(0)} % of ${encoderMbS.toFixed(1)} MB/s`]);

const smallRun = run(pipelineFile("full-small", small, full), cores);
results.memory = { small_mb: smallMb, small_peak_rss_mb: smallRun.rss_mb, large_mb: largeMb, large_peak_rss_mb: pN.rss_mb, flatness: pN.rss_mb / smallRun.rss_mb };
rows.push([`peak RSS ${smallMb} MB → ${largeMb} MB`, "", "", `${smallRun.rss_mb.toFixed(0)} → ${pN.rss_mb.toFixed(0)} MB (${(pN.rss_mb / smallRun.rss_mb).toFixed(2)}×)`]);

console.log("");
const widths = [0, 1, 2, 3].map((c) => Math.max(...[["measure", "MB/s", "records/s", "note"], ...rows].map((r) => String(r[c]).length)));
for (const r of [["measure", "MB/s", "records/s", "note"], ...rows]) console.log(r.map((v, c) => String(v).padEnd(widths[c])).join("  "));

if (!flag("skip-minhash")) {
  console.log("\nMinHash (bench/minhash.bench.js):");
  const r = spawnSync(process.execPath, [join(root, "bench/minhash.bench.js"), "--mb", String(Math.min(100, largeMb)), "--skip-memory"], { encoding: "utf8", stdio: ["ignore", "pipe", "inherit"] });
  process.stdout.write(r.stdout);
  results.minhash = r.stdout.trim().split("\n");
}

if (!flag("skip-cluster")) {
  console.log("\nCluster tasks against run (bench/cluster.js):");
  // 16 tasks per phase on the large corpus in 32 files and 16 packing groups: the ideal-cluster figure.
  const args = ["--mb", String(largeMb), "--files", "32", "--tasks", "16", "--parallel", String(cores), "--group-mb", String(Math.ceil(largeMb / 16))];
  const r = spawnSync(process.execPath, [join(root, "bench/cluster.js"), ...args], { encoding: "utf8", stdio: ["ignore", "pipe", "inherit"] });
  process.stdout.write(r.stdout);
  results.cluster = r.stdout.trim().split("\n");
}

for (const d of ["full", "full-small", "tok"]) for (const name of [`out-${d}`, `.out-${d}.cache`]) rmSync(join(work, name), { recursive: true, force: true });
writeFileSync(join(work, "results.json"), JSON.stringify(results, null, 2) + "\n");
console.log(`\nwrote ${join(work, "results.json")}`);
