// Runs one task of one phase: checks that the phases before it are complete, does its share,
// writes its files atomically and its marker last. Running a task again redoes it from scratch and
// rewrites the same files, so a scheduler's retry is safe.
import { appendFileSync, mkdirSync } from "node:fs";
import { availableParallelism } from "node:os";
import { dirname, join } from "node:path";
import { SiftpackError, describeSystemError, isSystemError } from "../errors.js";
import { loadHasher } from "../lib/hash.js";
import { addCounts, BuildCache, cacheDirOf, noCacheReport } from "../cache/build-cache.js";
import { recordPool } from "../parallel/record-pool.js";
import type { LoadedPipeline } from "../pipeline/load.js";
import type { Logger, StageContext } from "../types.js";
import type { Manifest } from "../output/manifest.js";
import { readdir, rm, stat } from "node:fs/promises";
import { crashPoint } from "../lib/crash-point.js";
import { collectUnit, partitionStep, resolveStep, type KeyedDirs, type KeyedForm } from "../stages/keyed.js";
import { planPhases, shareOf, type PhasePlan } from "./plan.js";
import { readUnit } from "./read-phase.js";
import { PassStages } from "./pass-phase.js";
import { wholePhase } from "./whole-phase.js";
import { assemblePhase } from "./assemble.js";
import { PhaseMeter, type ProgressListener } from "./progress.js";
import { packGroup, analysisDirs, groupDir, type PackGroupOptions } from "./pack-phase.js";
import { StepMemo } from "./step-memo.js";
import { collectedFiles, filesUnder, packKey, passFiles, pieceKey, passKey, rereadFiles, rereadKey } from "./step-keys.js";
import { TallyWriter, talliesHere } from "./mixture-tally.js";
import { IDS_CHECK } from "./plan.js";
import { sourcesToCheck, uniqueIdsForm } from "./unique-ids.js";
import { outputSettings } from "../stages/output-settings.js";
import { readEvents } from "../cache/record-events.js";
import { analysisForm } from "../analysis/registry.js";
import type { DocRecord } from "../types.js";
import { collectPieces, keyedDirs, materializes, packGroups, unitBytes, type PackGroup, planKey, recordsBefore, sourceOf, stepContext, summaryFile, unitsFile, unitsOf, UnitOutput, type TaskEnv, type Unit } from "./unit-io.js";
import { clearTemporaries, logPath, markDone, markFailed, markStarted, phaseDir, requireDone, writeAtomic, type TaskDone } from "./workdir.js";

export interface TaskOptions {
  log: Logger;
  /** Threads for the per-record stages, the tokenizer and MinHash signing (default: the machine's cores). */
  workers?: number;
  /** Reuse the build cache beside the output (default true). */
  cache?: boolean;
  /** The plan to follow (default: the pipeline's, with its `cluster.tasks`). */
  plan?: PhasePlan;
  /** Progress of the task's phase (at most five reports a second, and at its end). */
  onProgress?: ProgressListener;
  /** Shared across the tasks of one local run, so its report covers them all. */
  buildCache?: BuildCache;
  /** The bytes the task will read, when the caller has measured them already (a local run's phaseLayout). */
  bytesTotal?: number;
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

/**
 * A logger that also appends each line to the task's log file (for `status`). `note` writes an
 * info line to the file but only a debug line to the console: a task's start and end are what
 * `status` reads, while a person watching a build sees them in the progress display.
 */
function teeLogger(log: Logger, path: string, phase: string, index: number): Logger & { note(obj: object, msg: string): void } {
  mkdirSync(dirname(path), { recursive: true });
  const file = (level: string, obj: object | string, msg?: string) => {
    const o = typeof obj === "string" ? { msg: obj } : { ...obj, ...(msg ? { msg } : {}) };
    appendFileSync(path, JSON.stringify({ time: new Date().toISOString(), level, phase, task: index, ...o }) + "\n");
  };
  const line = (level: string) => (obj: object | string, msg?: string) => {
    file(level, obj, msg);
    (log as unknown as Record<string, (o: object | string, m?: string) => void>)[level](obj, msg);
  };
  return {
    info: line("info"),
    warn: line("warn"),
    error: line("error"),
    debug: (o, m) => log.debug(o, m),
    note: (o, m) => {
      file("info", o, m);
      log.debug(o, m);
    },
  };
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
  const out = outputSettings(p.config.stages, p.baseDir);
  const groups = groupsOf(p, units, done.get(plan.phases[0].name));
  const share = shareOf(index, phase.tasks, itemsOf(plan, k, units, groups));
  const bytesTotal = opts.bytesTotal ?? (await phaseBytes(plan, units, groups, k, share));
  const meter = new PhaseMeter({ phase: phase.name, index: k, phases: plan.phases.length, tasks: 1, bytesTotal }, [], opts.onProgress);
  const env: TaskEnv = { p, plan, key, units, phase, index, done, log, threads, meter };
  // The analyses' files: collected per piece (a unit's records in a group) by the pack phase, joined per partition by the analysis phase.
  const pieces = collectPieces(groups);
  const analysisFiles = () =>
    plan.analyses.map((steps) => ({ steps, ctx: { config: p.config, baseDir: p.baseDir }, dirs: analysisDirs(env, packPhaseOf(plan), analysisPhaseOf(plan), steps.key, pieces.count) }));
  await markStarted(work, phase.name, index);
  // A pack task removes each of its groups' directories before packing it instead.
  if (phase.does.kind !== "pack") await clearTemporaries(phaseDir(work, phase.name), phase.tasks === 1 ? undefined : share);
  const counts: Record<string, number> = {};
  // While a step kept in the cache runs, its counters are noted too, to be raised again when it is reused.
  let stepCounts: Record<string, number> | undefined;
  const count = (name: string, n = 1) => {
    counts[name] = (counts[name] ?? 0) + n;
    if (stepCounts) stepCounts[name] = (stepCounts[name] ?? 0) + n;
  };
  const unitFacts: TaskDone["units"] = {};
  let files: string[] = [];
  const cache = opts.buildCache ?? new BuildCache(cacheDirOf(p.outDir), opts.cache ?? true);
  await cache.open();
  const before = noCacheReport();
  addCounts(before, cache.report);
  const memo = new StepMemo(cache, work, log);
  /**
   * Runs a step, or links its files from the cache when `key` has an entry there; its result comes
   * back either way, and its counters and warnings are raised again when it is reused. `reused`
   * advances the progress by what the step would have read. `run` returns once the step has counted
   * and warned all it will, with `written`: its files still going to disk; the step's end (its files
   * kept in the cache) comes back as `end`, so the caller can start the next step meanwhile.
   */
  const begin = async <M>(key: string | undefined, run: () => Promise<{ written: Promise<M> }>, files: () => Promise<string[]>, reused?: () => Promise<void>): Promise<{ end: Promise<M> }> => {
    type Kept = { result: M; counts: Record<string, number>; warnings?: [object | string, string | undefined][] };
    const hit = key === undefined ? undefined : await memo.restore<Kept>(key);
    if (hit) {
      for (const [name, n] of Object.entries(hit.counts)) count(name, n);
      for (const [o, m] of hit.warnings ?? []) log.warn(o, m);
      await reused?.();
      return { end: Promise.resolve(hit.result) };
    }
    const noted: Record<string, number> = {};
    const warnings: NonNullable<Kept["warnings"]> = [];
    const warn = log.warn;
    stepCounts = noted;
    log.warn = (o, m) => {
      warnings.push([o, m]);
      warn(o, m);
    };
    const watch = cache.watch();
    let written: Promise<M>;
    try {
      ({ written } = await run());
    } finally {
      stepCounts = undefined;
      log.warn = warn;
    }
    const used = watch();
    const end = written.then(async (result) => {
      if (key !== undefined) await memo.save<Kept>(key, await files(), { result, counts: noted, ...(warnings.length ? { warnings } : {}) }, used);
      return result;
    });
    // Awaited by the caller later; a failure meanwhile is not an unhandled rejection.
    end.catch(() => {});
    return { end };
  };
  /** A step run to its end. */
  const step = async <M>(key: string | undefined, run: () => Promise<M>, files: () => Promise<string[]>, reused?: () => Promise<void>): Promise<M> =>
    (await begin(key, async () => ({ written: Promise.resolve(await run()) }), files, reused)).end;
  /** The progress of a reused step: the bytes phase k would have read for these units. */
  const readBytes = async (us: number[]) => meter.bytes(await unitFilesBytes(plan, k, us));
  let manifest: Manifest | undefined;
  try {
    log.note({ phase: phase.name, task: index, tasks: phase.tasks }, "task started");
    const does = phase.does;
    if (does.kind === "read") {
      const pool = recordPool({ stages: does.entries, baseDir: p.baseDir, seed: p.config.seed }, threads);
      // The explicit-id check collects the ids of the sources that need it from what was read.
      const check = sourcesToCheck(units);
      const ids = plan.keyed.has(IDS_CHECK) && check.size > 0 ? { dirs: keyedDirs(env, IDS_CHECK), collectors: await uniqueIdsForm.collectors({}, { ...stepContext(env, count), threads }) } : undefined;
      try {
        const tally = talliesHere(env);
        for (const u of share) {
          const r = await readUnit(env, u, does.entries, pool, cache);
          for (const [name, n] of Object.entries(r.counts)) count(name, n);
          unitFacts[u] = { rows: r.rows, records: r.records, size: r.size, xxh64: r.xxh64, lines: r.lines, fp: r.fp };
          const feed = ids ? check.has(units[u].source.name) : undefined;
          if (tally || ids)
            await step(
              rereadKey(env, u, r.fp, tally, feed),
              async () => rereadUnit(env, u, tally, ids ? { c: await collectUnit(ids.dirs, ids.collectors, u), feed: feed! } : undefined),
              () => rereadFiles(env, u),
            );
        }
      } finally {
        await pool.close();
        await ids?.collectors.close();
      }
    } else if (does.kind === "pass") {
      const steps = does.collect === undefined ? undefined : plan.keyed.get(does.collect)!;
      const dirs = does.collect === undefined ? undefined : keyedDirs(env, does.collect);
      const collectors = steps ? await steps.form.collectors(steps.entry.options, { ...stepContext(env, count), threads }) : undefined;
      const stages = await PassStages.create(does.entries, p.baseDir, p.config.seed, threads, cache);
      try {
        for (const u of share) {
          const key = await passKey(env, u, count);
          const records = await step(
            key,
            async () => passUnit(env, u, stages, count, collectors && dirs ? await collectUnit(dirs, collectors, u) : undefined),
            () => passFiles(env, u),
            () => readBytes([u]),
          );
          unitFacts[u] = { records, ...(key ? { fp: key } : {}) };
        }
      } finally {
        await stages.close();
        await collectors?.close();
      }
    } else if (does.kind === "partition") {
      const steps = plan.keyed.get(does.keyed)!;
      await partitions(env, share, steps.form, steps.entry.options, keyedDirs(env, does.keyed), count);
    } else if (does.kind === "resolve") {
      const steps = plan.keyed.get(does.keyed)!;
      crashPoint("resolve");
      files = await resolveStep(steps.form, steps.entry.options, keyedDirs(env, does.keyed), stepContext(env, count));
      meter.bytes(bytesTotal);
    } else if (does.kind === "whole") {
      const r = await wholePhase(env, does.entries, count);
      files = r.files;
      for (const [u, n] of r.records) unitFacts[u] = { records: n };
    } else if (does.kind === "pack") {
      const analyses: PackGroupOptions["analyses"] = [];
      for (const a of analysisFiles()) analyses.push({ ...a, collectors: await a.steps.collectors(a.ctx, { ...stepContext(env, count), threads }) });
      const pieceFiles = async (piece: number) => (await Promise.all(analyses.map((a) => collectedFiles(a.dirs.collect, piece)))).flat();
      // A group's pieces kept in the cache on their own, so a group packed again collects only the units that changed.
      const piecesOf = (g: number): PackGroupOptions["pieces"] => {
        const keys = new Map<number, string | undefined>();
        return {
          first: pieces.first[g],
          async restore(u, piece) {
            const key = await pieceKey(env, groups[g], u, piece, count);
            keys.set(piece, key);
            if (key === undefined) return false;
            // Nothing of an earlier attempt stays beside what the entry links (it may have fewer files).
            for (const f of await pieceFiles(piece)) await rm(f, { force: true });
            return (await memo.restore(key, false)) !== undefined;
          },
          async save(_u, piece) {
            const key = keys.get(piece);
            if (key !== undefined) await memo.save(key, await pieceFiles(piece), {}, [], false);
          },
        };
      };
      // A group's files are written while the next group is packed; one group at a time waits to be written.
      let writing: Promise<unknown> = Promise.resolve();
      try {
        for (const g of share) {
          const dir = groupDir(work, phase.name, g);
          // Cleared for either way the step goes: packed anew, or linked from the cache.
          await rm(dir, { recursive: true, force: true });
          const { end } = await begin(
            await packKey(env, groups[g], count),
            () => packGroup(env, groups[g], { out, count, analyses, ids: plan.keyed.has(IDS_CHECK) ? IDS_CHECK : undefined, pieces: piecesOf(g) }),
            async () => [...(await filesUnder(dir)), ...(await Promise.all(groups[g].units.map((_, j) => pieceFiles(pieces.first[g] + j)))).flat()],
            () => readBytes(groups[g].units),
          );
          const before = writing;
          writing = end;
          await before;
        }
        await writing;
      } catch (err) {
        // Nothing is left writing when the task fails.
        await writing.catch(() => {});
        throw err;
      } finally {
        for (const a of analyses) await a.collectors.close();
      }
    } else if (does.kind === "analysis") {
      for (const a of analysisFiles()) await partitions(env, share, analysisForm(a.steps, a.ctx), undefined, a.dirs, count);
    } else {
      manifest = await assemblePhase(env, { packPhase: packPhaseOf(plan), groupCount: groups.length, analyses: analysisFiles() });
      // A cluster's build, published: the cache keeps what its tasks used, as `run` prunes it (a local run prunes itself).
      if (!opts.buildCache) await pruneAfterTasks(cache, [...done.values()].flat(), log);
    }
  } catch (caught) {
    // A system error while writing the work directory (a full disk, a folder made read-only) is a
    // failure of this build, told in one line, not an internal error.
    const err = !(caught instanceof SiftpackError) && isSystemError(caught) ? new SiftpackError("SP_OUTPUT", `phase ${phase.name}: writing ${work} failed: ${describeSystemError(caught)}`, { cause: caught }) : caught;
    await markFailed(work, phase.name, index, (err as Error)?.message ?? String(err)).catch(() => {});
    // Into the task's log only: the caller reports the error itself. On a full or read-only disk
    // this write fails too, and that failure must not take the place of the error it records.
    try {
      appendFileSync(logPath(work, phase.name, index), JSON.stringify({ time: new Date().toISOString(), level: "error", phase: phase.name, task: index, error: (err as Error)?.message ?? String(err), msg: "task failed" }) + "\n");
    } catch {
      // The marker above, when it could be written, says the same for `status`.
    }
    throw err;
  }
  // What this task counted; the folder's size is the run's to say, once it has pruned.
  const report = noCacheReport();
  addCounts(report, cache.report);
  addCounts(report, before, -1);
  // A task in a process of its own (a cluster's) lists the cache entries it used, for the assemble task's pruning.
  const used = opts.buildCache ? undefined : cache.takeUsed();
  const d: TaskDone = { plan: key, phase: phase.name, index, tasks: phase.tasks, counts, units: unitFacts, files, cache: report, seconds: (Date.now() - started) / 1000, ...(used ? { used } : {}) };
  await markDone(work, d);
  meter.taskDone();
  // Memory as the task ends (this process, its worker threads included): where a build's peak comes from.
  log.note({ phase: phase.name, task: index, seconds: d.seconds, rss_mb: Math.round(process.memoryUsage.rss() / 2 ** 20), peak_rss_mb: Math.round(process.resourceUsage().maxRSS / 1024) }, "task done");
  return { done: d, manifest };
}

/** The packing groups; large files are cut by rows once the read phase's row counts (`readDone`) are known. */
function groupsOf(p: LoadedPipeline, units: Unit[], readDone: TaskDone[] | undefined): PackGroup[] {
  const rows = new Map<number, number>();
  for (const d of readDone ?? []) for (const [u, f] of Object.entries(d.units)) rows.set(Number(u), f.rows ?? 0);
  return packGroups(units, outputSettings(p.config.stages, p.baseDir).pack.group_mb * 1e6, readDone ? (u) => rows.get(u) ?? 0 : undefined);
}

/** What phase k's tasks share: units, packing groups, key partitions (the plan's task count), or one item. */
function itemsOf(plan: PhasePlan, k: number, units: Unit[], groups: PackGroup[]): number {
  const phase = plan.phases[k];
  return phase.perUnit ? units.length : phase.does.kind === "pack" ? groups.length : phase.tasks === 1 ? 1 : plan.tasks;
}

/** A phase's tasks before they run: each one's share of the phase's items and the bytes it will read. */
export interface PhaseLayout {
  shares: number[][];
  bytes: number[];
}

/** The layout of phase `name`, once the phases before it are done (a local run asks it to spread the tasks over threads). */
export async function phaseLayout(p: LoadedPipeline, plan: PhasePlan, units: Unit[], name: string): Promise<PhaseLayout> {
  const k = phaseIndex(plan, name);
  const read = k > 0 ? await requireDone(plan, planKey(p, units, plan), plan.phases[0], name) : undefined;
  const groups = groupsOf(p, units, read);
  const items = itemsOf(plan, k, units, groups);
  const shares = Array.from({ length: plan.phases[k].tasks }, (_, i) => shareOf(i, plan.phases[k].tasks, items));
  const bytes: number[] = [];
  for (const share of shares) bytes.push(await phaseBytes(plan, units, groups, k, share));
  return { shares, bytes };
}

const packPhaseOf = (plan: PhasePlan) => plan.phases.find((ph) => ph.does.kind === "pack")!.name;
const analysisPhaseOf = (plan: PhasePlan) => plan.phases.find((ph) => ph.does.kind === "analysis")?.name ?? "analysis";

/** The task's share of a keyed form's partition steps (a keyed stage's, or an analysis'). */
async function partitions<O>(env: TaskEnv, share: number[], form: KeyedForm<O>, options: O, dirs: KeyedDirs, count: (name: string, n?: number) => void): Promise<void> {
  for (const part of share) {
    crashPoint("partition");
    await partitionStep(form, options, dirs, part, stepContext(env, count));
    env.meter.bytes(await partitionBytes(dirs.collect, part));
  }
}

/** One unit through a pass: records before it, the pass's stages, the collector; records, drops and summaries written. */
async function passUnit(env: TaskEnv, u: number, stages: PassStages, count: (name: string, n?: number) => void, collector?: Awaited<ReturnType<typeof collectUnit>>): Promise<number> {
  if (!materializes(env.phase)) return collectOnly(env, u, collector!);
  const work = env.plan.workDir;
  const out = await UnitOutput.open(work, env.phase.name, u);
  const ctx: StageContext = { seed: env.p.config.seed, log: env.log, workDir: phaseDir(work, env.phase.name), addOutputFile: () => {}, count, drop: (r, reason, detail) => out.drop(r, reason, detail) };
  const summaries: unknown[] = [];
  // When packing reads this pass's records, the unit's train figures for the mixture are gathered here.
  const tally = talliesHere(env) ? new TallyWriter(env.p.config.seed) : undefined;
  try {
    for await (const r of stages.run(recordsBefore(env, env.phase.index, u, ctx), ctx, summaries, env.units[u].range)) {
      tally?.add(r);
      await collector?.add(r);
      await out.add(r);
    }
    await collector?.finish();
    await tally?.write(work, env.phase.name, u);
    if (summaries.length > 0) await writeAtomic(summaryFile(work, env.phase.name, u), JSON.stringify(summaries) + "\n");
    await out.commit();
  } catch (err) {
    await out.abort();
    await collector?.abort();
    throw err;
  }
  return out.records;
}

/**
 * A pass without stages (see `materializes`): the unit's records as they stand go to the collector,
 * and nothing is written for the next phase. The decisions applied here are applied again, and their
 * drops and counters recorded, by the next phase that reads these records.
 */
async function collectOnly(env: TaskEnv, u: number, collector: Awaited<ReturnType<typeof collectUnit>>): Promise<number> {
  const ctx: StageContext = { seed: env.p.config.seed, log: env.log, workDir: phaseDir(env.plan.workDir, env.phase.name), addOutputFile: () => {}, count: () => {}, drop: () => {} };
  let records = 0;
  try {
    for await (const r of recordsBefore(env, env.phase.index, u, ctx)) {
      await collector.add(r);
      records++;
      crashPoint("unit-records");
    }
    await collector.finish();
  } catch (err) {
    await collector.abort();
    throw err;
  }
  return records;
}

/**
 * After a build run as separate task processes: removes the cache entries no task of it used. Not
 * when a marker lacks the list (written by a task run some other way): then what it used is unknown.
 */
async function pruneAfterTasks(cache: BuildCache, done: TaskDone[], log: Logger): Promise<void> {
  if (done.some((d) => d.used === undefined)) return;
  for (const d of done) cache.use(d.used!);
  const removed = await cache.pruneOrWarn(log);
  if (removed > 0) log.info({ cache: cache.dir, removed }, `cache: ${removed} entries no task of this build used removed`);
}

/** Bytes of the collected files of partition `part` (every keyed file name). */
async function partitionBytes(collectDir: string, part: number): Promise<number> {
  const root = join(collectDir, "keyed");
  let n = 0;
  for (const name of await readdir(root).catch(() => [] as string[])) n += await dirBytes(join(root, name, String(part).padStart(5, "0")));
  return n;
}

async function dirBytes(dir: string): Promise<number> {
  let n = 0;
  for (const e of await readdir(dir, { withFileTypes: true }).catch(() => [])) {
    const path = join(dir, e.name);
    if (e.isDirectory()) n += await dirBytes(path);
    else n += (await stat(path).catch(() => ({ size: 0 }))).size;
  }
  return n;
}

/**
 * What needs a read unit's records once its file is written, in one pass over that file: the
 * explicit-id check (`ids`: fed the ids of the records and drops when `feed`, rows of the unit
 * itself) and the mixture's tally (`tally`: when the read phase is the one packing reads).
 */
async function rereadUnit(env: TaskEnv, u: number, tally: boolean, ids: { c: Awaited<ReturnType<typeof collectUnit>>; feed: boolean } | undefined): Promise<void> {
  const writer = tally ? new TallyWriter(env.p.config.seed) : undefined;
  const feed = ids?.feed ? ids.c : undefined;
  try {
    if (writer || feed)
      // Bare records serve the id check; the tally needs each record's split and token ids too.
      for await (const e of readEvents(unitsFile(env.plan.workDir, "read", u), writer ? { text: false } : { bare: true })) {
        if (e.k === "rec") {
          writer?.add(e.r);
          await feed?.add(e.r);
        } else if (e.k === "drop") await feed?.add({ id: e.id, source: e.source, seq: e.i } as DocRecord);
      }
    await writer?.write(env.plan.workDir, "read", u);
    await ids?.c.finish();
  } catch (err) {
    await ids?.c.abort();
    throw err;
  }
}

/** What the task's share of phase k reads, in bytes: input units, the unit files before it, or collected material. */
async function phaseBytes(plan: PhasePlan, units: Unit[], groups: PackGroup[], k: number, share: number[]): Promise<number> {
  const phase = plan.phases[k];
  const does = phase.does;
  if (does.kind === "analysis") {
    let n = 0;
    for (const a of plan.analyses) for (const part of share) n += await partitionBytes(join(plan.workDir, packPhaseOf(plan), `analysis-${a.key}`), part);
    return n;
  }
  if (does.kind === "read") return share.reduce((a, u) => a + unitBytes(units[u]), 0);
  if (does.kind === "partition") {
    let n = 0;
    for (const part of share) n += await partitionBytes(join(plan.workDir, plan.keyed.get(does.keyed)!.collect), part);
    return n;
  }
  if (does.kind === "resolve") return dirBytes(join(plan.workDir, plan.keyed.get(does.keyed)!.partition, "shared"));
  const list = does.kind === "pass" ? share : does.kind === "pack" ? share.flatMap((g) => groups[g].units) : does.kind === "assemble" ? [] : range(0, units.length);
  return unitFilesBytes(plan, k, list);
}

/** Bytes of the unit files phase k reads (those of the phase whose records it takes) for units `us`. */
async function unitFilesBytes(plan: PhasePlan, k: number, us: number[]): Promise<number> {
  const from = sourceOf(plan, k).from.name;
  let n = 0;
  for (const u of us) n += (await stat(unitsFile(plan.workDir, from, u)).catch(() => ({ size: 0 }))).size;
  return n;
}

const range = (from: number, to: number) => Array.from({ length: to - from }, (_, i) => from + i);
