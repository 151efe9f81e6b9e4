// The assemble phase (one task): the packing groups joined — ledger members and quarantine lines
// end to end, shards moved in, counts and split statistics summed — the stages' files copied in,
// the whole-corpus checks of `unit` stages gathered, the analyses' figures read from their
// partitions, the manifest written, and the build published in one rename. It reads no token.
import { copyFile, mkdir, open, readFile, rename, rm } from "node:fs/promises";
import { dirname, join, resolve } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import { outputSettings } from "../stages/output-settings.js";
import { formOf } from "../stages/stage.js";
import { TRAINED_FILE } from "../tokenizer/index.js";
import { crashPoint } from "../lib/crash-point.js";
import type { LedgerCounts } from "../output/ledger.js";
import { mergeConversationStats } from "../chat/tally.js";
import { paddingFraction, type SplitStats, type WrittenFile } from "../output/shard-writer.js";
import { LengthHistogram } from "../pack/length-histogram.js";
import { freeName } from "../lib/numbered-name.js";
import { Rng, seedFor } from "../pack/rng.js";
import { shufflesSplit } from "../stages/pack.js";
import { checkOutputPlace, prepareStaging, publishStaging } from "../output/output-dir.js";
import { writeManifest, type Manifest } from "../output/manifest.js";
import { writeBuildInfo } from "../output/build-info.js";
import { summaryFile, type TaskEnv } from "./unit-io.js";
import { groupDir, type GroupResult } from "./pack-phase.js";
import type { AnalysisContext, AnalysisSteps } from "../analysis/steps.js";
import type { KeyedDirs } from "../stages/keyed.js";
import { STAGES } from "../stages/index.js";
import { decontaminationOf } from "../stages/decontaminate-report.js";
import type { TaskDone } from "./workdir.js";
import { mixtureOf } from "./mixture-tally.js";
import { mixtureEntry } from "./mixture.js";

export interface AssembleInput {
  /** The pack phase's name and its number of groups. */
  packPhase: string;
  groupCount: number;
  /** The analyses that apply, with their files. */
  analyses: { steps: AnalysisSteps; ctx: AnalysisContext; dirs: KeyedDirs }[];
}

export async function assemblePhase(env: TaskEnv, { packPhase, groupCount, analyses }: AssembleInput): Promise<Manifest> {
  const { p, plan } = env;
  const { config } = p;
  const startedAt = new Date();
  const work = plan.workDir;
  const allDone = [...env.done.values()].flat();
  const readDone = env.done.get("read")!;
  const facts = new Map<number, TaskDone["units"][string]>();
  for (const d of readDone) for (const [u, f] of Object.entries(d.units)) facts.set(Number(u), f);
  // One entry per input file (a file read in parts is hashed whole by its first part).
  const inputs: Manifest["inputs"] = env.units.filter((u) => !u.range || u.range.start === 0).map((u) => ({ source: u.source.name, path: u.path, size: facts.get(u.u)!.size!, xxh64: facts.get(u.u)!.xxh64! }));

  // As a local run checks before it starts: a cluster's last task must not replace a folder holding the pipeline or an input.
  await checkOutputPlace(p.outDir, p.file, env.units.map((u) => resolve(p.baseDir, u.path)));
  const staging = await prepareStaging(p.outDir);
  const out = outputSettings(config.stages, p.baseDir);
  const packOpts = out.pack;
  const { tokenDtype, segmentDtype } = out;

  // Stage files in phase order, then the counters of every task.
  const stageFiles: string[] = [];
  let trainedPath: string | undefined;
  for (const ph of plan.phases) {
    for (const d of env.done.get(ph.name) ?? []) {
      for (const f of d.files) {
        // A stage used twice writes its file twice: the later ones get -2, -3 … before the extension.
        const name = freeName(f, (c) => stageFiles.includes(c));
        await copyFile(join(work, ph.name, "files", f), join(staging, name));
        stageFiles.push(name);
        if (f === TRAINED_FILE) trainedPath = join(staging, f);
      }
    }
  }
  const stageCounts: Record<string, number> = {};
  const count = (name: string, n = 1) => (stageCounts[name] = (stageCounts[name] ?? 0) + n);
  for (const d of allDone) for (const [k, n] of Object.entries(d.counts)) count(k, n);
  // Stages of form `unit` hand their whole-stream checks to `gather`, with every unit's summary in input order.
  for (const ph of plan.phases) {
    if (ph.does.kind !== "pass") continue;
    for (const [k, e] of ph.does.entries.entries()) {
      const f = formOf(STAGES[e.name], e.options);
      if (f.kind !== "unit") continue;
      const summaries: unknown[] = [];
      for (const unit of env.units) {
        const list = JSON.parse(await readFile(summaryFile(work, ph.name, unit.u), "utf8")) as unknown[];
        if (list[k] !== undefined && list[k] !== null) summaries.push(list[k]);
      }
      await f.gather(summaries, e.options, { seed: config.seed, baseDir: p.baseDir, log: env.log, count, workDir: staging, addOutputFile: (f) => stageFiles.push(f) });
    }
  }

  // The groups' results, in group order: counts summed, split statistics merged, shards listed.
  const groups: GroupResult[] = [];
  for (let g = 0; g < groupCount; g++) groups.push(JSON.parse(await readFile(join(groupDir(work, packPhase, g), "group.json"), "utf8")) as GroupResult);
  const c = mergeCounts(groups.map((r) => r.counts));
  if (c.read > 0 && c.quarantined / c.read > config.max_bad_fraction) {
    // The quarantine lines, joined beside the output (a failed run removes its .partial folder), so the message can point at them.
    const rejected = rejectedQuarantine(p.outDir);
    await joinFiles(groups.map((_, g) => join(groupDir(work, packPhase, g), "quarantine.jsonl")), rejected);
    throw new SiftpackError(
      "SP_BAD_FRACTION",
      `${c.quarantined} of ${c.read} input records (${((100 * c.quarantined) / c.read).toFixed(1)} %) were quarantined, more than max_bad_fraction ${config.max_bad_fraction}; see ${rejected}`,
    );
  }
  const splitStats = mergeSplits(groups.map((r) => r.splits), packOpts.length);
  // A shuffled split lists its shards in a seeded order, so that a trainer reading them in the
  // manifest's order meets the packing groups interleaved (rows are shuffled within each group).
  for (const [split, st] of Object.entries(splitStats)) if (shufflesSplit(packOpts.shuffle, split)) seededOrder(st.shards, seedFor(config.seed, `shards:${split}`));
  const files: WrittenFile[] = [];
  try {
    // Gzip members joined end to end are one gzip file (RFC 1952, 2.2): the ledger needs no recompression.
    await joinFiles(groups.map((_, g) => join(groupDir(work, packPhase, g), "ledger.jsonl.gz")), join(staging, "ledger.jsonl.gz"));
    await joinFiles(groups.map((_, g) => join(groupDir(work, packPhase, g), "quarantine.jsonl")), join(staging, "quarantine.jsonl"));
    for (const [g, r] of groups.entries()) {
      for (const f of r.files) {
        crashPoint("assemble");
        await mkdir(dirname(join(staging, f.path)), { recursive: true });
        await moveFile(join(groupDir(work, packPhase, g), f.path), join(staging, f.path));
        files.push(f);
      }
    }
  } catch (err) {
    if (err instanceof SiftpackError) throw err;
    const code = (err as NodeJS.ErrnoException)?.code;
    if (typeof code === "string" && /^E[A-Z]+$/.test(code)) throw new SiftpackError("SP_OUTPUT", `writing ${staging} failed: ${describeSystemError(err)}`, { cause: err });
    throw err;
  }
  const analysis: Record<string, unknown> = { stage_counts: Object.fromEntries(Object.entries(stageCounts).sort(([a], [b]) => (a < b ? -1 : 1))) };
  // What decontamination removed and the n-grams behind it, from its report files (README, decontaminate).
  const decontamination = decontaminationOf(staging, stageFiles);
  if (decontamination) analysis.decontamination = decontamination;
  // The training mixture: asked and achieved shares, tokens available and epochs per source (README, Mixtures).
  const mixture = await mixtureOf(env);
  if (mixture) {
    analysis.mixture = mixtureEntry(mixture);
    for (const w of mixture.warnings) env.log.warn({ mixture: true }, w);
  }
  for (const a of analyses) analysis[a.steps.key] = await a.steps.figures(a.ctx, a.dirs, { seed: config.seed, baseDir: p.baseDir, log: env.log, count, tmpDir: staging });

  const splitOrder = ["train", "val", "test"];
  const splits = Object.keys(splitStats).sort((a, b) => splitOrder.indexOf(a) - splitOrder.indexOf(b));
  const encoder = out.encoder(trainedPath ? await readFile(trainedPath, "utf8") : undefined);
  const manifest = await writeManifest(staging, {
    pipeline: p,
    inputs,
    encoder,
    bos: out.bos,
    eos: out.eos,
    length: packOpts.length,
    strategy: packOpts.strategy,
    tokenDtype,
    segmentDtype,
    splits: Object.fromEntries(splits.map((s) => [s, splitStats[s]])),
    counts: c,
    files,
    extraFiles: stageFiles,
    analysis,
  });
  await writeBuildInfo(staging, p, startedAt);
  await publishStaging(staging, p.outDir);
  // The quarantine list a refused build left beside the output is stale once a build is published.
  await rm(rejectedQuarantine(p.outDir), { force: true });
  env.log.info({ outDir: p.outDir, records: c.read, kept: c.kept }, "build complete");
  return manifest;
}

/** Fisher–Yates with the seeded generator the row shuffle uses. */
function seededOrder<T>(list: T[], seed: number): void {
  const rng = new Rng(seed);
  for (let n = list.length; n > 1; n--) {
    const j = rng.below(n);
    [list[n - 1], list[j]] = [list[j], list[n - 1]];
  }
}

/** Appends whole files into one, in order (a byte copy). */
async function joinFiles(parts: string[], to: string): Promise<void> {
  const out = await open(to, "w");
  try {
    for (const part of parts) {
      const buf = await readFile(part);
      await out.write(buf);
    }
  } finally {
    await out.close();
  }
}

/** Moves a file (a rename; a copy when the work directory is on another file system). */
async function moveFile(from: string, to: string): Promise<void> {
  try {
    await rename(from, to);
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code !== "EXDEV") throw err;
    await copyFile(from, to);
    await rm(from, { force: true });
  }
}

function mergeCounts(list: LedgerCounts[]): LedgerCounts {
  const c: LedgerCounts & { tokens: number } = { read: 0, kept: 0, dropped: 0, quarantined: 0, tokens: 0, by_reason: {}, by_source: {}, by_split: {} };
  const add = (into: Record<string, number>, from: Record<string, number>) => {
    for (const [k, n] of Object.entries(from)) into[k] = (into[k] ?? 0) + n;
  };
  for (const x of list) {
    c.read += x.read;
    c.kept += x.kept;
    c.dropped += x.dropped;
    c.quarantined += x.quarantined;
    add(c.by_reason, x.by_reason);
    add(c.by_split, x.by_split);
    if (x.truncated_files) {
      c.truncated_files = (c.truncated_files ?? 0) + x.truncated_files;
      c.rows_lost = (c.rows_lost ?? 0) + (x.rows_lost ?? 0);
    }
    for (const [s, v] of Object.entries(x.by_source)) add((c.by_source[s] ??= { read: 0, kept: 0, dropped: 0, quarantined: 0, tokens: 0 }) as unknown as Record<string, number>, v as unknown as Record<string, number>);
  }
  // Tokens put into the splits (repeats by weight included), summed over the sources (a single ledger left this 0).
  for (const v of Object.values(c.by_source)) c.tokens += v.tokens;
  // Keys in order of first appearance, groups in build order: as one ledger over every record would have them.
  return c;
}

/** Split statistics of every group summed; the shard lists joined in group order; histograms added bucket by bucket. */
function mergeSplits(list: Record<string, SplitStats>[], length: number): Record<string, SplitStats> {
  const out: Record<string, SplitStats> = {};
  const histograms = new Map<string, LengthHistogram>();
  for (const splits of list) {
    for (const [name, s] of Object.entries(splits)) {
      const m = (out[name] ??= { documents: 0, blocks: 0, tokens: 0, target_tokens: 0, padding_tokens: 0, padding_fraction: 0, cut_documents: 0, targets_lost_to_cuts: 0, continuation_tokens: 0, length_histogram: [], shards: [] });
      for (const k of ["documents", "blocks", "tokens", "target_tokens", "padding_tokens", "cut_documents", "targets_lost_to_cuts", "continuation_tokens"] as const) m[k] += s[k];
      let h = histograms.get(name);
      if (!h) histograms.set(name, (h = new LengthHistogram()));
      h.addBuckets(s.length_histogram);
      m.shards.push(...s.shards);
      if (s.conversations) m.conversations = mergeConversationStats(m.conversations ? [m.conversations, s.conversations] : [s.conversations]);
    }
  }
  for (const [name, m] of Object.entries(out)) {
    m.length_histogram = histograms.get(name)!.buckets();
    m.padding_fraction = paddingFraction(m.padding_tokens, m.blocks, length);
  }
  return out;
}

/** Where a build refused for too many quarantined records leaves their list: beside the output, `<out>.quarantine.jsonl`. */
function rejectedQuarantine(outDir: string): string {
  return `${outDir}.quarantine.jsonl`;
}
