// Runs a loaded pipeline: sources → stages → packer per split → shards, ledger and manifest.
import { join } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import { STAGES } from "../stages/index.js";
import { createPacker, type Packer, type PackOptions } from "../stages/pack.js";
import { createTokenize, encoderFor, tokenizeBounds, type TokenizeOptions } from "../stages/tokenize.js";
import { listFiles } from "../sources/source.js";
import { readUnits, type InputProgress } from "./read-units.js";
import { parallelTokenize } from "./cached-tokenize.js";
import { recordPool, type RecordPool } from "../parallel/record-pool.js";
import { availableParallelism } from "node:os";
import type { StageEntry } from "./config.js";
import { BuildCache, cacheDirOf, type CacheReport } from "../cache/build-cache.js";
import { crashPoint } from "../lib/crash-point.js";
import { Ledger } from "../output/ledger.js";
import { ShardWriter, type Emit } from "../output/shard-writer.js";
import { prepareStaging, publishStaging } from "../output/output-dir.js";
import { writeManifest, type Manifest } from "../output/manifest.js";
import { writeBuildInfo } from "../output/build-info.js";
import { hashFile, loadHasher, unitHash } from "../lib/hash.js";
import type { DocRecord, Logger, StageContext } from "../types.js";
import type { LoadedPipeline } from "./load.js";
import { ANALYZERS, type Analyzer } from "../analysis/analyzer.js";

export interface RunOptions {
  log: Logger;
  /** Reuse cached per-file results (default true); false recomputes and refreshes them. */
  cache?: boolean;
  /** Threads for the per-record stages and the tokenizer (default: the machine's cores). */
  workers?: number;
  /** Called at most five times a second, and whenever an input file is finished, with running counts (for a progress display). */
  onProgress?: (p: RunProgress) => void;
}

/** Running counts: records by fate so far, and how far reading the inputs has got. */
export interface RunProgress extends InputProgress {
  read: number;
  kept: number;
  dropped: number;
  quarantined: number;
  /** Sum of the input files' sizes on disk, known before reading starts. */
  bytesTotal: number;
  filesTotal: number;
}

export interface RunResult {
  outDir: string;
  manifest: Manifest;
  /** Which units came from the cache and which were computed. */
  cache: CacheReport;
}

/** How many times a record of a source with `weight` enters training: floor(w), plus one more with probability frac(w). */
export function copiesFor(weight: number, key: string, seed: number): number {
  const whole = Math.floor(weight);
  const frac = weight - whole;
  return whole + (frac > 0 && unitHash(key, seed ^ 0x5eed) < frac ? 1 : 0);
}

export async function runPipeline(p: LoadedPipeline, opts: RunOptions): Promise<RunResult> {
  const { config } = p;
  const startedAt = new Date();
  const log = opts.log;
  await loadHasher();

  // Inputs first: a missing file is reported before anything is written.
  const inputs: Manifest["inputs"] = [];
  for (const spec of config.sources) {
    for (const file of await listFiles(spec, p.baseDir)) {
      const abs = join(p.baseDir, file);
      const { size, xxh64 } = await hashFile(abs).catch((err) => {
        throw new SiftpackError("SP_INPUT_MISSING", `source "${spec.name}": cannot read ${file}: ${describeSystemError(err)}`, { cause: err });
      });
      inputs.push({ source: spec.name, path: file, size, xxh64 });
    }
  }

  const staging = await prepareStaging(p.outDir);
  const ledger = new Ledger(join(staging, "ledger.jsonl.gz"), join(staging, "quarantine.jsonl"));

  const tokOpts = config.stages.find((s) => s.name === "tokenize")!.options as TokenizeOptions;
  const packOpts = config.stages.find((s) => s.name === "pack")!.options as PackOptions;
  // With train, the tokenizer exists only once its stage has read the records; the EOS id and a
  // vocabulary bound (for the token dtype) follow from the options before that.
  const bounds = tokenizeBounds(tokOpts, p.baseDir);
  const tokenDtype = bounds.vocabSize <= 65536 ? "uint16" : "uint32";
  const segmentDtype = packOpts.length < 65536 ? "uint16" : "uint32";

  const stageFiles: string[] = [];
  const stageCounts: Record<string, number> = {};
  const ctx: StageContext = {
    seed: config.seed,
    log,
    drop: (r, reason, detail) => ledger.dropped(r, reason, detail),
    workDir: staging,
    addOutputFile: (rel) => stageFiles.push(rel),
    count: (name, n = 1) => (stageCounts[name] = (stageCounts[name] ?? 0) + n),
  };

  // Mixture weights decide how many copies of a record train sees: a function of source, id and
  // seed, so it survives stages that spill records to disk and read them back.
  const weights = new Map(config.sources.map((s) => [s.name, s.weight]));
  const copiesOf = (r: DocRecord) => {
    const w = weights.get(r.source) ?? 1;
    return w === 1 ? 1 : copiesFor(w, `${r.source}\u0000${r.id}`, config.seed);
  };
  let lastProgress = 0;
  let at: InputProgress = { bytesDone: 0, filesDone: 0 };
  const bytesTotal = inputs.reduce((a, i) => a + i.size, 0);
  // Reading reports where it is (file boundaries pass at once, so a display sees every file finish);
  // other calls only refresh the counts.
  const progress = (input?: InputProgress) => {
    if (input) at = input;
    const now = Date.now();
    if (opts.onProgress && (now - lastProgress >= 200 || input)) {
      lastProgress = now;
      const { read, kept, dropped, quarantined } = ledger.counts;
      opts.onProgress({ read, kept, dropped, quarantined, ...at, bytesTotal, filesTotal: inputs.length });
    }
  };

  // The leading per-record stages run (and are cached) per input file, in batches on a pool of
  // worker threads; the rest see one stream, the tokenizer again in batches on a pool.
  const entries = config.stages.filter((e) => e.name !== "pack");
  let prefixLength = 0;
  // A tokenizer being trained needs every record before it can tokenize one: it ends the prefix.
  const training = (e: StageEntry) => e.name === "tokenize" && (e.options as TokenizeOptions).train !== undefined;
  while (prefixLength < entries.length && STAGES[entries[prefixLength].name].perRecord && !training(entries[prefixLength])) prefixLength++;
  const threads = Math.max(1, opts.workers ?? availableParallelism());
  const pools: RecordPool[] = [];
  const poolFor = (stages: StageEntry[]) => {
    const pool = recordPool({ stages, baseDir: p.baseDir, seed: config.seed }, threads);
    pools.push(pool);
    return pool;
  };
  const cache = new BuildCache(cacheDirOf(p.outDir), opts.cache ?? true);
  await cache.open();
  let stream: AsyncIterable<DocRecord> = readUnits({
    config,
    baseDir: p.baseDir,
    inputs,
    cache,
    ledger,
    ctx,
    prefix: entries.slice(0, prefixLength),
    pool: poolFor(entries.slice(0, prefixLength)),
    copiesOf,
    progress,
  });
  let trained: ReturnType<typeof createTokenize> | undefined;
  for (let i = prefixLength; i < entries.length; i++) {
    const entry = entries[i];
    if (training(entry)) {
      trained = createTokenize(entry.options as TokenizeOptions, { baseDir: p.baseDir, workers: threads });
      stream = trained.stage(stream, ctx);
    } else if (entry.name === "tokenize") {
      stream = parallelTokenize(entry.options as TokenizeOptions, poolFor([entry]), cache, encoderFor(entry.options as TokenizeOptions, p.baseDir).name)(stream, ctx);
    } else {
      const stage = await STAGES[entry.name].create(entry.options, { baseDir: p.baseDir, workers: threads });
      stream = stage(stream, ctx);
    }
  }

  const analyzers: { key: string; analyzer: Analyzer }[] = [];
  for (const f of ANALYZERS) {
    const analyzer = await f.create({ config, workDir: staging, baseDir: p.baseDir, workers: threads, log });
    if (analyzer) analyzers.push({ key: f.key, analyzer });
  }

  const writers = new Map<string, { writer: ShardWriter; packer: Packer }>();
  const writerFor = (split: string) => {
    let w = writers.get(split);
    if (!w) {
      const writer = new ShardWriter({
        outDir: staging,
        split,
        length: packOpts.length,
        shardBlocks: config.output.shard_blocks,
        tokenDtype,
        segmentDtype,
        emit: packOpts.emit as Emit[],
      });
      const packer = createPacker(packOpts, bounds.eosId, (t, s) => writer.addRow(t, s), { seed: config.seed, split });
      w = { writer, packer };
      writers.set(split, w);
    }
    return w;
  };

  try {
    for await (const r of stream) {
      const split = r.split ?? "train";
      // Repetition serves the training mixture only; held-out text is seen once.
      const n = split === "train" ? copiesOf(r) : 1;
      crashPoint("records");
      ledger.kept(r, n !== 1 ? { copies: n } : {});
      const { writer, packer } = writerFor(split);
      for (let i = 0; i < n; i++) packer.add(r.tokens!);
      for (const a of analyzers) await a.analyzer.add(r);
      if (writer.pending > 0) await writer.writePending();
      await ledger.flush();
      progress();
    }
    for (const { writer, packer } of writers.values()) {
      packer.finish();
      await writer.finish();
      Object.assign(writer.stats, packer.stats);
    }
    await ledger.close();
  } catch (err) {
    // A failed build never calls finish(): release the analyzers' threads and files here.
    for (const a of analyzers) await a.analyzer.close?.().catch(() => {});
    if (err instanceof SiftpackError) throw err;
    const code = (err as NodeJS.ErrnoException)?.code;
    if (typeof code === "string" && /^E[A-Z]+$/.test(code))
      throw new SiftpackError("SP_OUTPUT", `writing ${staging} failed: ${describeSystemError(err)}`, { cause: err });
    throw err;
  } finally {
    for (const pool of pools) await pool.close();
  }

  const c = ledger.counts;
  if (c.read > 0 && c.quarantined / c.read > config.max_bad_fraction) {
    for (const a of analyzers) await a.analyzer.close?.().catch(() => {});
    throw new SiftpackError(
      "SP_BAD_FRACTION",
      `${c.quarantined} of ${c.read} input records (${((100 * c.quarantined) / c.read).toFixed(1)} %) were quarantined, more than max_bad_fraction ${config.max_bad_fraction}; see ${join(staging, "quarantine.jsonl")}`,
    );
  }

  const analysis: Record<string, unknown> = { stage_counts: Object.fromEntries(Object.entries(stageCounts).sort(([a], [b]) => (a < b ? -1 : 1))) };
  for (const a of analyzers) analysis[a.key] = await a.analyzer.finish();

  const splitOrder = ["train", "val", "test"];
  const splits = [...writers.keys()].sort((a, b) => splitOrder.indexOf(a) - splitOrder.indexOf(b));
  const manifest = await writeManifest(staging, {
    pipeline: p,
    inputs,
    encoder: trained ? trained.encoder() : encoderFor(tokOpts, p.baseDir),
    tokenize: tokOpts,
    pack: packOpts,
    tokenDtype,
    segmentDtype,
    splits: Object.fromEntries(splits.map((s) => [s, writers.get(s)!.writer.stats])),
    counts: c,
    files: splits.flatMap((s) => writers.get(s)!.writer.files),
    extraFiles: stageFiles,
    analysis,
  });
  await writeBuildInfo(staging, p, startedAt);
  await publishStaging(staging, p.outDir);
  await cache.prune();
  log.info({ outDir: p.outDir, records: c.read, kept: c.kept }, "build complete");
  log.info({ cache: cache.report }, "cache");
  return { outDir: p.outDir, manifest, cache: cache.report };
}
