// Runs a loaded pipeline on this machine: the same phases a cluster runs as tasks (src/engine/).
import { basename, dirname, join, resolve } from "node:path";
import { rm } from "node:fs/promises";
import { BuildCache, cacheDirOf, cacheSize, noCacheReport, type CacheReport } from "../cache/build-cache.js";
import type { Manifest } from "../output/manifest.js";
import type { Logger } from "../types.js";
import type { LoadedPipeline } from "../pipeline/load.js";
import { PhaseTally, type PhaseTiming, type ProgressListener } from "./progress.js";
import { planPhases } from "./plan.js";
import { phaseLayout, runTask } from "./task.js";
import { unitBytes, unitsOf, type Unit } from "./unit-io.js";
import { TaskThreads } from "./task-threads.js";
import { compiledModule } from "../parallel/pool.js";
import { availableParallelism } from "node:os";
import { checkOutputPlace, prepareStaging } from "../output/output-dir.js";
import { acquireRunLock } from "../output/run-lock.js";
import { describeSystemError } from "../errors.js";
import { checkFreshness, recordFreshness, snapshot } from "../output/freshness.js";

export interface RunOptions {
  log: Logger;
  /** Keep the phases' work directory (.<out>.run) after the build, to look at what each phase wrote. */
  keepWork?: boolean;
  /** Reuse cached per-file results (default true); false recomputes and refreshes them. */
  cache?: boolean;
  /** Threads for the per-record stages and the tokenizer (default: the machine's cores). */
  workers?: number;
  /** Called at most five times a second, and at the end of every task, with the phase at work and the phases done. */
  onProgress?: ProgressListener;
  /** Leave an earlier build that is up to date as it is (README, Rebuilding in CI); `run` asks it unless --force or --no-cache. */
  skipFresh?: boolean;
}

export interface RunResult {
  outDir: string;
  manifest: Manifest;
  /** Which units came from the cache and which were computed. */
  cache: CacheReport;
  /** Time, bytes and records of every phase. */
  phases: PhaseTiming[];
  /** Set when the earlier build was up to date and nothing was built (`cache` then reports nothing reused or computed). */
  upToDate?: { hashed: number };
}

/**
 * Builds on this machine by running the task plan's phases in order (the result does not depend on
 * the number of tasks): on a small input or one worker, one task per phase using the worker
 * threads for its per-record stages; else two tasks per worker, run side by side in task threads. The work directory
 * beside the output is removed once the build is published. One run at a time per output: a
 * second one refuses while the first holds the lock beside the output.
 */
export async function runPipeline(p: LoadedPipeline, opts: RunOptions): Promise<RunResult> {
  const units = await unitsOf(p);
  // Never an output folder that would take the pipeline file or an input with it.
  await checkOutputPlace(p.outDir, p.file, units.map((u) => resolve(p.baseDir, u.path)));
  const lock = await acquireRunLock(p.outDir, opts.log);
  try {
    // Under the lock: no other run is replacing the build being looked at.
    const verdict = opts.skipFresh ? await checkFreshness(p, p.outDir) : undefined;
    if (verdict) {
      if (verdict.fresh) {
        // Touched files had the same bytes: their new times are recorded, so the next check need not hash them.
        if (verdict.hashed > 0) await recordFreshness(p.outDir, verdict.now);
        return { outDir: p.outDir, manifest: verdict.manifest, cache: { ...noCacheReport(), size: { ...(await cacheSize(cacheDirOf(p.outDir))), removed: 0 } }, phases: [], upToDate: { hashed: verdict.hashed } };
      }
      opts.log.info({ outDir: p.outDir }, `building: ${verdict.why}`);
    }
    // Taken before anything is read: a file changed while the build runs has a newer time than recorded.
    const before = verdict?.now ?? (await snapshot(p));
    const result = await runLocked(p, opts, units);
    await recordFreshness(result.outDir, before);
    return result;
  } finally {
    await lock.release();
  }
}

/** Input bytes from which a run with two or more workers runs a phase's tasks side by side (SIFTPACK_TASK_THREADS_FROM_MB: for tests). */
function sideBySideFrom(): number {
  const mb = Number(process.env.SIFTPACK_TASK_THREADS_FROM_MB);
  return (Number.isFinite(mb) && mb >= 0 ? mb : 16) * 1e6;
}

async function runLocked(p: LoadedPipeline, opts: RunOptions, units: Unit[]): Promise<RunResult> {
  const threads = Math.max(1, opts.workers ?? availableParallelism());
  const module = compiledModule("./task-thread.js", import.meta.url);
  // Below a few megabytes a thread's start costs more than it saves; then one task per phase, as a cluster's smallest plan.
  const sideBySide = threads >= 2 && module !== undefined && units.reduce((a, u) => a + unitBytes(u), 0) >= sideBySideFrom();
  // Two tasks per thread: a phase's shares differ in size, and a thread that finishes early takes the next.
  const plan = planPhases(p, sideBySide ? 2 * threads : 1);
  plan.workDir = join(dirname(p.outDir), `.${basename(p.outDir)}.run`);
  // The output's checks first (a path under a file, a directory that is no build): clear one-line errors.
  await prepareStaging(p.outDir);
  await rm(plan.workDir, { recursive: true, force: true });
  const cache = new BuildCache(cacheDirOf(p.outDir), opts.cache ?? true);
  await cache.open();
  const pool = sideBySide ? new TaskThreads(module!, { p, units, tasks: plan.tasks, workDir: plan.workDir, cache: opts.cache ?? true }, threads, opts.log) : undefined;
  const finished: PhaseTiming[] = [];
  let manifest: Manifest | undefined;
  let failed = true;
  try {
    for (const phase of plan.phases) {
      const layout = await phaseLayout(p, plan, units, phase.name);
      const tally = new PhaseTally({ phase: phase.name, index: phase.index, phases: plan.phases.length, tasks: phase.tasks, bytesTotal: layout.bytes.reduce((a, b) => a + b, 0) }, finished, opts.onProgress);
      const here = async (i: number, workers: number) => {
        const r = await runTask(p, phase.name, i, { log: opts.log, workers, plan, buildCache: cache, onProgress: (b) => tally.task(i, b.current), units, bytesTotal: layout.bytes[i] });
        manifest = r.manifest ?? manifest;
        tally.taskDone();
      };
      const busy = layout.shares.flatMap((s, i) => (s.length > 0 ? [i] : []));
      if (!pool || busy.length < 2) {
        // One task with work (or none): it has every worker thread for its per-record stages.
        for (let i = 0; i < phase.tasks; i++) await here(i, threads);
      } else {
        // Tasks without a share only leave their markers.
        for (let i = 0; i < phase.tasks; i++) if (!busy.includes(i)) await here(i, 1);
        await sideBySideTasks(pool, phase.name, busy.map((i) => ({ index: i, bytes: layout.bytes[i] })), threads, cache, tally);
      }
      tally.finish();
    }
    failed = false;
  } finally {
    await pool?.close();
    // Failed or not, the phases' files go (the error was reported; the cache keeps what was read).
    // A folder that cannot be removed must not hide the build's own error; the next run removes it.
    if (!opts.keepWork)
      await rm(plan.workDir, { recursive: true, force: true }).catch((err) =>
        opts.log[failed ? "debug" : "warn"]({ workDir: plan.workDir }, `cannot remove the work directory ${plan.workDir}: ${describeSystemError(err)}; the next run removes it`),
      );
  }
  await cache.pruneOrWarn(opts.log);
  // The summary says it on stdout; here for those who read the debug log.
  opts.log.debug({ cache: cache.report }, "cache");
  return { outDir: p.outDir, manifest: manifest!, cache: cache.report, phases: finished };
}

/**
 * Runs the tasks `busy` of a phase (with the bytes each will read) in the task threads, as many at a time as there are threads, each
 * taking the next when it ends. After a failure no further task starts; the error of the lowest
 * task index is thrown once the running ones have ended, so a build with bad input reports the
 * same error however the tasks were timed.
 */
async function sideBySideTasks(pool: TaskThreads, phase: string, busy: { index: number; bytes: number }[], threads: number, cache: BuildCache, tally: PhaseTally): Promise<void> {
  const queue = [...busy];
  const lanes = Math.min(pool.size, busy.length);
  const workers = Math.max(1, Math.floor(threads / lanes));
  const errors = new Map<number, unknown>();
  const lane = async () => {
    for (let t = queue.shift(); t !== undefined && errors.size === 0; t = queue.shift()) {
      const { index, bytes } = t;
      try {
        const r = await pool.run({ phase, index, workers, bytes }, (c) => tally.task(index, c));
        cache.absorb(r.used, r.done.cache);
        tally.taskDone();
      } catch (err) {
        cache.absorb((err as { used?: string[] }).used ?? [], undefined);
        errors.set(index, err);
      }
    }
  };
  await Promise.all(Array.from({ length: lanes }, lane));
  if (errors.size > 0) throw errors.get(Math.min(...errors.keys()));
}
