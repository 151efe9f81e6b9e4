// Test harness for analysis steps: runs them as the build will (a collector per packing group over a
// KeyedDirs, the partition step of every partition through the keyed stages' partitionStep, then
// `figures`), and the one-pass analyzers on the same records for comparison.
import { mkdtemp, rm } from "node:fs/promises";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { collectUnit, KeyedDirs, partitionStep, type KeyedFiles } from "../../src/stages/keyed.js";
import { analysisForm } from "../../src/analysis/registry.js";
import type { AnalysisContext, AnalysisSteps } from "../../src/analysis/steps.js";
import { parsePipeline } from "../../src/pipeline/load.js";
import { tokenStatsAnalyzer } from "./token-stats-one-pass.js";
import { SplitOverlap } from "../../src/overlap/split-overlap.js";
import { nearDupOf, vocabSizeOf } from "../../src/analysis/overlap-settings.js";
import type { DocRecord, Logger } from "../../src/types.js";

export interface PipelineKnobs {
  seed: number;
  ngram: number;
  nearDuplicates: boolean;
  permutations: number;
  threshold: number;
  vocab: number;
}

/** A pipeline file of the invented depot corpus with the settings the overlap figures read. */
export function contextOf(k: PipelineKnobs): AnalysisContext {
  const config = parsePipeline(
    `siftpack: 1
seed: ${k.seed}
overlap: { ngram: ${k.ngram}, near_duplicates: ${k.nearDuplicates} }
sources:
  - { name: tickets, files: "tickets/*.jsonl", format: jsonl }
  - { name: manuals, files: "manuals/*.txt", format: text }
stages:
  - dedup: { method: minhash, shingle: word, ngram: 2, permutations: ${k.permutations}, threshold: ${k.threshold} }
  - split: { holdout: { val: 0.1, test: 0.1 } }
  - tokenize: { train: { vocab_size: ${k.vocab} } }
  - pack: { length: 64 }
output: { dir: out }
`,
    "depot.yaml",
  );
  return { config, baseDir: tmpdir() };
}

export interface StepsRun {
  figures: unknown;
  /** Debug lines the collectors logged. */
  debugged: Record<string, unknown>[];
}

const quiet = () => undefined;

/**
 * Group boundaries from cut points: group k holds records [bounds[k], bounds[k + 1]); repeated
 * points make empty groups.
 */
export function groupBounds(n: number, cuts: number[]): number[] {
  return [0, ...[...cuts].map((c) => Math.max(0, Math.min(n, c))).sort((a, b) => a - b), n];
}

/**
 * Runs `steps` as the build will: `KeyedDirs` with packing groups as units, one collector per group
 * fed its records in order, the partition step of every partition (in a shuffled order when asked:
 * they are independent tasks), then `figures`. `view` may change what `figures` sees (negative controls).
 */
export async function runSteps(
  steps: AnalysisSteps,
  ctx: AnalysisContext,
  records: DocRecord[],
  cuts: number[],
  partitions: number,
  o: { threads?: number; partitionOrder?: number[]; view?: (files: KeyedDirs) => KeyedFiles } = {},
): Promise<StepsRun> {
  const debugged: Record<string, unknown>[] = [];
  const log: Logger = { info: quiet, warn: quiet, error: quiet, debug: (x) => void (typeof x === "object" && debugged.push(x as Record<string, unknown>)) };
  const count = quiet;
  const bounds = groupBounds(records.length, cuts);
  const groups = bounds.length - 1;
  const dir = await mkdtemp(join(tmpdir(), "siftpack-analysis-"));
  try {
    const dirs = new KeyedDirs(join(dir, "collect"), join(dir, "partition"), undefined, groups, partitions);
    const collectors = await steps.collectors(ctx, { seed: ctx.config.seed, baseDir: ctx.baseDir, threads: o.threads ?? 1, log, count });
    try {
      for (let g = 0; g < groups; g++) {
        const unit = await collectUnit(dirs, collectors, g);
        for (let i = bounds[g]; i < bounds[g + 1]; i++) await unit.add(records[i]);
        await unit.finish();
      }
    } finally {
      await collectors.close();
    }
    const form = analysisForm(steps, ctx);
    const sc = { seed: ctx.config.seed, baseDir: ctx.baseDir, log, count };
    for (const p of o.partitionOrder ?? Array.from({ length: partitions }, (_, p) => p)) await partitionStep(form, undefined, dirs, p, sc);
    const tmp = await mkdtemp(join(dir, "figures-"));
    const figures = await steps.figures(ctx, o.view ? o.view(dirs) : dirs, { ...sc, tmpDir: tmp });
    return { figures, debugged };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

/** Today's one-pass analyzers over the same records in the same order (the overlap one in this thread, exact train set). */
export async function runOnePass(ctx: AnalysisContext, records: DocRecord[]): Promise<{ token_stats: unknown; overlap: unknown }> {
  const stats = (await tokenStatsAnalyzer.create({} as never))!;
  const dir = await mkdtemp(join(tmpdir(), "siftpack-onepass-"));
  try {
    const c = ctx.config;
    const o = new SplitOverlap({ ngram: c.overlap.ngram, form: "NFKC", vocabSize: vocabSizeOf(c, ctx.baseDir), nearDup: nearDupOf(c), tmpDir: dir });
    for (const r of records) {
      await stats.add(r);
      o.add(r.split ?? "train", r.text, r.tokens);
    }
    return { token_stats: await stats.finish(), overlap: o.finish() };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
