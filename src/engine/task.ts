// Runs one task of one phase: checks that the phases before it are complete, does its share,
// writes its files atomically and its marker last. Running a task again redoes it from scratch and
// rewrites the same files, so a scheduler's retry is safe.
import { appendFileSync, mkdirSync } from "node:fs";
import { availableParallelism } from "node:os";
import { dirname, join } from "node:path";
import { SiftpackError } from "../errors.js";
import { loadHasher } from "../lib/hash.js";
import { BuildCache, cacheDirOf, type CacheReport } from "../cache/build-cache.js";
import { recordPool } from "../parallel/record-pool.js";
import { SignerPool } from "../dedup/pool.js";
import type { LoadedPipeline } from "../pipeline/load.js";
import type { Logger, StageContext } from "../types.js";
import type { Manifest } from "../output/manifest.js";
import type { Ledger } from "../output/ledger.js";
import { planPhases, shareOf, type PhasePlan } from "./plan.js";
import { collectorParams, openCollector, type Collector } from "./collect.js";
import { readUnit } from "./read-phase.js";
import { PassStages } from "./pass-phase.js";
import { bucketsPhase, clustersPhase, collectingPhase, exactPhase } from "./dedup-phases.js";
import { linesPhase, openLinesCollector } from "./lines-phase.js";
import type { StripRepeatedLinesOptions } from "../stages/strip-repeated-lines.js";
import { wholePhase } from "./whole-phase.js";
import { assemblePhase } from "./assemble.js";
import { planKey, recordsBefore, summaryFile, unitsOf, UnitOutput, type TaskEnv, type Unit } from "./unit-io.js";
import { clearTemporaries, logPath, markDone, markFailed, markStarted, phaseDir, requireDone, writeAtomic, type TaskDone } from "./workdir.js";

export interface TaskOptions {
  log: Logger;
  /** Threads for the per-record stages, the tokenizer and MinHash signing (default: the machine's cores). */
  workers?: number;
  /** Reuse the build cache beside the output (default true). */
  cache?: boolean;
  /** The plan to follow (default: the pipeline's, with its `cluster.tasks`). */
  plan?: PhasePlan;
  progress?: (counts: Ledger["counts"]) => void;
  /** Shared across the tasks of one local run, so its report covers them all. */
  buildCache?: BuildCache;
  /** The units of work, when the caller has listed them already (a local run lists them once). */
  units?: Unit[];
}

export interface TaskResult {
  done: TaskDone;
  /** Set by the assemble phase. */
  manifest?: Manifest;
}

/** The phase index of `name`, or an error listing the phases. */
export function phaseIndex(plan: PhasePlan, name: string): number {
  const k = plan.phases.findIndex((ph) => ph.name === name);
  if (k < 0) throw new SiftpackError("SP_USAGE", `no phase "${name}" in this plan; the phases are ${plan.phases.map((ph) => ph.name).join(", ")}`);
  return k;
}

/** A logger that also appends each line to the task's log file (for `status`). */
function teeLogger(log: Logger, path: string, phase: string, index: number): Logger {
  mkdirSync(dirname(path), { recursive: true });
  const line = (level: string) => (obj: object | string, msg?: string) => {
    const o = typeof obj === "string" ? { msg: obj } : { ...obj, ...(msg ? { msg } : {}) };
    appendFileSync(path, JSON.stringify({ time: new Date().toISOString(), level, phase, task: index, ...o }) + "\n");
    (log as unknown as Record<string, (o: object | string, m?: string) => void>)[level](obj, msg);
  };
  return { info: line("info"), warn: line("warn"), error: line("error"), debug: (o, m) => log.debug(o, m) };
}

export async function runTask(p: LoadedPipeline, phaseName: string, index: number, opts: TaskOptions): Promise<TaskResult> {
  const started = Date.now();
  await loadHasher();
  const plan = opts.plan ?? planPhases(p);
  const k = phaseIndex(plan, phaseName);
  const phase = plan.phases[k];
  if (!Number.isInteger(index) || index < 0 || index >= phase.tasks)
    throw new SiftpackError("SP_USAGE", `phase "${phase.name}" has ${phase.tasks} task${phase.tasks === 1 ? "" : "s"} (indexes 0–${phase.tasks - 1}); got index ${index}`);
  const units = opts.units ?? (await unitsOf(p));
  const key = planKey(p, units, plan);
  const work = plan.workDir;
  await writeAtomic(join(work, "plan.json"), JSON.stringify({ pipeline: plan.pipeline, outDir: plan.outDir, key, phases: plan.phases.map(({ name, tasks, summary }) => ({ name, tasks, summary })) }, null, 2) + "\n");
  const done = new Map<string, TaskDone[]>();
  for (const before of plan.phases.slice(0, k)) done.set(before.name, await requireDone(plan, key, before, phase.name));

  const log = teeLogger(opts.log, logPath(work, phase.name, index), phase.name, index);
  const threads = Math.max(1, opts.workers ?? availableParallelism());
  const env: TaskEnv = { p, plan, key, units, phase, index, done, log, threads };
  await markStarted(work, phase.name, index);
  await clearTemporaries(
    phaseDir(work, phase.name),
    phase.tasks === 1 ? undefined : shareOf(index, phase.tasks, phase.perFile ? units.length : plan.tasks),
  );
  const counts: Record<string, number> = {};
  const count = (name: string, n = 1) => (counts[name] = (counts[name] ?? 0) + n);
  const unitFacts: TaskDone["units"] = {};
  let files: string[] = [];
  const cache = opts.buildCache ?? new BuildCache(cacheDirOf(p.outDir), opts.cache ?? true);
  await cache.open();
  const before: CacheReport = JSON.parse(JSON.stringify(cache.report));
  let manifest: Manifest | undefined;
  try {
    log.info({ phase: phase.name, task: index, tasks: phase.tasks }, "task started");
    const does = phase.does;
    if (does.kind === "read" || does.kind === "pass") {
      const { from, to } = shareOf(index, phase.tasks, units.length);
      const params = does.collect ? collectorParams(does.collect, p.config.seed) : undefined;
      const signer = params ? new SignerPool(params, threads > 1 ? threads : 0) : undefined;
      const pool = does.kind === "read" ? recordPool({ stages: does.entries, baseDir: p.baseDir, seed: p.config.seed }, threads) : undefined;
      const stages = does.kind === "pass" ? await PassStages.create(does.entries, p.baseDir, p.config.seed, threads, cache) : undefined;
      try {
        for (let u = from; u < to; u++) {
          const collector: Collector | undefined = !does.collect
            ? undefined
            : does.collect.kind === "lines"
              ? await openLinesCollector(does.collect.entry.options as StripRepeatedLinesOptions, work, phase.name, u, plan.tasks, count)
              : await openCollector(does.collect, work, phase.name, u, p.config.seed, plan.tasks, signer);
          try {
            if (does.kind === "read") {
              const r = await readUnit(env, u, does.entries, pool!, cache, collector);
              for (const [name, n] of Object.entries(r.counts)) count(name, n);
              unitFacts[u] = { rows: r.rows, records: r.records, size: r.size, xxh64: r.xxh64, lines: r.lines };
            } else {
              const out = await UnitOutput.open(work, phase.name, u);
              const ctx: StageContext = { seed: p.config.seed, log, workDir: phaseDir(work, phase.name), addOutputFile: () => {}, count, drop: (r, reason, detail) => out.drop(r, reason, detail) };
              const summaries: unknown[] = [];
              try {
                for await (const r of stages!.run(recordsBefore(env, k, u, ctx.drop, count), ctx, summaries, units[u].range)) {
                  await collector?.add(r);
                  await out.add(r);
                }
                if (summaries.length > 0) await writeAtomic(summaryFile(work, phase.name, u), JSON.stringify(summaries) + "\n");
                await out.commit();
              } catch (err) {
                await out.abort();
                throw err;
              }
              unitFacts[u] = { records: out.records };
            }
            await collector?.finish();
          } catch (err) {
            await collector?.abort();
            throw err;
          }
        }
      } finally {
        await pool?.close();
        await stages?.close();
        await signer?.close();
      }
    } else if (does.kind === "exact") await exactPhase(env);
    else if (does.kind === "buckets") {
      const r = await bucketsPhase(env);
      log.info({ phase: phase.name, task: index, comparisons: r.compared, pairs: r.edges }, "bucket partitions joined");
    } else if (does.kind === "clusters") files = [await clustersPhase(env, count)];
    else if (does.kind === "lines") await linesPhase(env, collectingPhase(env, k), count);
    else if (does.kind === "whole") {
      const r = await wholePhase(env, does.entries, count);
      files = r.files;
      for (const [u, n] of r.records) unitFacts[u] = { records: n };
    } else manifest = await assemblePhase(env, { progress: opts.progress });
  } catch (err) {
    await markFailed(work, phase.name, index, (err as Error)?.message ?? String(err)).catch(() => {});
    // Into the task's log only: the caller reports the error itself.
    appendFileSync(logPath(work, phase.name, index), JSON.stringify({ time: new Date().toISOString(), level: "error", phase: phase.name, task: index, error: (err as Error)?.message ?? String(err), msg: "task failed" }) + "\n");
    throw err;
  }
  const report: CacheReport = {
    read: { reused: cache.report.read.reused - before.read.reused, computed: cache.report.read.computed - before.read.computed },
    tokens: {
      reused: cache.report.tokens.reused - before.tokens.reused,
      computed: cache.report.tokens.computed - before.tokens.computed,
      records_reused: cache.report.tokens.records_reused - before.tokens.records_reused,
      records_computed: cache.report.tokens.records_computed - before.tokens.records_computed,
    },
  };
  const d: TaskDone = { plan: key, phase: phase.name, index, tasks: phase.tasks, counts, units: unitFacts, files, cache: report, seconds: (Date.now() - started) / 1000 };
  await markDone(work, d);
  log.info({ phase: phase.name, task: index, seconds: d.seconds }, "task done");
  return { done: d, manifest };
}
