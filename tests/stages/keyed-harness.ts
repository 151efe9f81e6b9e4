// Test harness for keyed stages: runs a keyed form's steps the way the build engine places them
// (units × partitions over a KeyedDirs), and the same form as one plain stream (`keyedStage`), each
// in a temporary directory, and returns what either way produced in one comparable shape.
import { mkdtemp, readFile, rm } from "node:fs/promises";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { collectUnit, KeyedDirs, keyedApplier, keyedStage, partitionStep, resolveStep, type KeyedForm } from "../../src/stages/keyed.js";
import type { Issue, Schema } from "../../src/pipeline/schema.js";
import type { DocRecord, Logger, StageContext } from "../../src/types.js";

export interface KeptRecord {
  id: string;
  text: string;
  cluster?: string;
}

export interface DroppedRecord {
  id: string;
  reason: string;
  detail?: Record<string, unknown>;
}

/** What one way of running a keyed form produced. */
export interface KeyedRun {
  /** Records that came out, in the order they came out. */
  kept: KeptRecord[];
  /** Records dropped, in the order they were dropped (input order, as both ways apply in input order). */
  drops: DroppedRecord[];
  /** Every `count` made by collectors, steps and applier. */
  counts: Record<string, number>;
  /** Build files by name, with their content. */
  files: Record<string, string>;
  /** Warnings logged (the line budget of strip_repeated_lines says so when it fills). */
  warnings: unknown[];
}

/** Resolves raw options through a stage's schema, failing loudly on any issue (a test's options are meant to be valid). */
export function optionsOf<O>(schema: Schema<O>, raw: unknown): O {
  const issues: Issue[] = [];
  const o = schema.check(raw, [], issues);
  if (issues.length) throw new Error(issues.map((i) => `${i.path.join(".")}: ${i.message}`).join("\n"));
  return o;
}

function recorder() {
  const run: KeyedRun = { kept: [], drops: [], counts: {}, files: {}, warnings: [] };
  const quiet = () => undefined;
  const log: Logger = { info: quiet, debug: quiet, error: quiet, warn: (o) => run.warnings.push(o) };
  const count = (name: string, n = 1) => void (run.counts[name] = (run.counts[name] ?? 0) + n);
  const drop = (r: DocRecord, reason: string, detail?: Record<string, unknown>) => void run.drops.push(detail === undefined ? { id: r.id, reason } : { id: r.id, reason, detail });
  const keep = (r: DocRecord) => void run.kept.push(r.cluster === undefined ? { id: r.id, text: r.text } : { id: r.id, text: r.text, cluster: r.cluster });
  return { run, log, count, drop, keep };
}

/**
 * Unit boundaries from cut points: unit k holds records [bounds[k], bounds[k + 1]). Cut points are
 * sorted and clamped, and may repeat, which makes an empty unit (an empty input file is one).
 */
export function unitBounds(n: number, cuts: number[]): number[] {
  return [0, ...[...cuts].map((c) => Math.max(0, Math.min(n, c))).sort((a, b) => a - b), n];
}

/**
 * Runs `form` as the engine does: one collector per unit fed that unit's records in order, the
 * partition step for every partition, the resolve step, then every unit's records read back with
 * the decisions applied. The records must carry a `seq` unique within their unit (decisions are
 * keyed by unit and `seq`); the tests number them across the whole input, as the engine numbers
 * the rows of a file cut into parts.
 */
export async function runCut<O>(form: KeyedForm<O>, o: O, records: DocRecord[], cuts: number[], partitions: number, seed: number): Promise<KeyedRun> {
  const { run, log, count, drop, keep } = recorder();
  const bounds = unitBounds(records.length, cuts);
  const units = bounds.length - 1;
  const dir = await mkdtemp(join(tmpdir(), "siftpack-keyed-cut-"));
  try {
    const dirs = new KeyedDirs(join(dir, "collect"), join(dir, "partition"), form.resolve ? join(dir, "resolve") : undefined, units, partitions);
    const collectors = await form.collectors(o, { seed, baseDir: dir, threads: 1, log, count });
    try {
      for (let u = 0; u < units; u++) {
        const unit = await collectUnit(dirs, collectors, u);
        for (let i = bounds[u]; i < bounds[u + 1]; i++) await unit.add(structuredClone(records[i]));
        await unit.finish();
      }
    } finally {
      await collectors.close();
    }
    const sc = { seed, baseDir: dir, log, count };
    for (let p = 0; p < partitions; p++) await partitionStep(form, o, dirs, p, sc);
    for (const f of await resolveStep(form, o, dirs, sc)) run.files[f] = await readFile(join(dirs.resolveDir!, "files", f), "utf8");
    const applierOf = await keyedApplier(form, o, dirs, sc);
    const ctx = stageContext(seed, dir, log, count, drop, () => undefined);
    for (let u = 0; u < units; u++) {
      const apply = await applierOf(u);
      for (let i = bounds[u]; i < bounds[u + 1]; i++) {
        const r = apply(structuredClone(records[i]), ctx);
        if (r) keep(r);
      }
    }
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
  return run;
}

/** Runs `form` as a plain stream stage over every record: one unit, one partition (`keyedStage`, one thread). */
export async function runWhole<O>(form: KeyedForm<O>, o: O, records: DocRecord[], seed: number): Promise<KeyedRun> {
  const { run, log, count, drop, keep } = recorder();
  const workDir = await mkdtemp(join(tmpdir(), "siftpack-keyed-whole-"));
  const listed: string[] = [];
  try {
    const ctx = stageContext(seed, workDir, log, count, drop, (f) => listed.push(f));
    async function* input(): AsyncGenerator<DocRecord> {
      for (const r of records) yield structuredClone(r);
    }
    for await (const r of keyedStage(form, o, 1)(input(), ctx)) keep(r);
    for (const f of listed) run.files[f] = await readFile(join(workDir, f), "utf8");
  } finally {
    await rm(workDir, { recursive: true, force: true });
  }
  return run;
}

function stageContext(seed: number, workDir: string, log: Logger, count: StageContext["count"], drop: StageContext["drop"], addOutputFile: (f: string) => void): StageContext {
  return { seed, workDir, log, count, drop, addOutputFile };
}
