// Reading the sources one input file at a time, each file a unit: its rows go through the leading
// per-record stages, and the outcome (quarantined rows, drops, surviving records) is cached so a
// rerun replays the file instead of reading and processing it again.
import { rm } from "node:fs/promises";
import { resolve } from "node:path";
import { readSourceFile, RecordMapper, type SourceSpec } from "../sources/source.js";
import { BuildCache } from "../cache/build-cache.js";
import { EventWriter, readEvents, recordEvent, tokensFromText } from "../cache/record-events.js";
import { toolVersion } from "../output/manifest.js";
import type { Ledger } from "../output/ledger.js";
import type { PipelineConfig, StageEntry } from "./config.js";
import { orderedMap } from "../parallel/pool.js";
import { BATCH_BYTES, BATCH_RECORDS, BATCHES_AHEAD, type RecordPool } from "../parallel/record-pool.js";
import { fromBatchRecord, toBatchRecord, unpack, type BatchItem } from "../parallel/record-batch.js";
import { SiftpackError } from "../errors.js";
import { encoderFor } from "../stages/tokenize.js";
import type { DocRecord, StageContext } from "../types.js";

export interface ReadUnitsOptions {
  config: PipelineConfig;
  baseDir: string;
  /** Files per source (relative paths) with their fingerprints. */
  inputs: { source: string; path: string; size: number; xxh64: string }[];
  cache: BuildCache;
  ledger: Ledger;
  ctx: StageContext;
  /** The leading per-record stages, as entries (for cache keys). */
  prefix: StageEntry[];
  /** Runs the prefix stages on batches. */
  pool: RecordPool;
  /** How many times train sees a record of a weighted source (0 = subsampled away). */
  copiesOf(r: DocRecord): number;
  /** Called with counts only, or with where reading is when it enters or finishes an input file. */
  progress(input?: InputProgress): void;
}

/** How far reading has got: the input files finished (and their bytes on disk), and the one being read. */
export interface InputProgress {
  bytesDone: number;
  filesDone: number;
  /** Absolute path and size of the file being read (absent between files and at the end). */
  file?: string;
  fileSize?: number;
}

export function unitId(source: string, file: string): string {
  return `${source}\u0000${file}`;
}

/** Every record of every source, file by file, after the prefix stages. */
export async function* readUnits(o: ReadUnitsOptions): AsyncGenerator<DocRecord> {
  let seq = 0;
  const nextSeq = () => seq++;
  let bytesDone = 0;
  let filesDone = 0;
  for (const spec of o.config.sources) {
    const mapper = new RecordMapper(spec);
    for (const input of o.inputs.filter((i) => i.source === spec.name)) {
      o.progress({ bytesDone, filesDone, file: resolve(o.baseDir, input.path), fileSize: input.size });
      const key = BuildCache.key({
        unit: "read",
        siftpack: toolVersion(),
        source: spec,
        file: input.path,
        size: input.size,
        xxh64: input.xxh64,
        seed: o.config.seed,
        // Default ids count rows across the source's files; explicit ids must be unique across them.
        first_row: mapper.rows,
        ids_before: mapper.idsDigest,
        // A tokenizer file is named by a hash of its content, so editing it invalidates the unit.
        prefix: o.prefix.map((e) => ({ [e.name]: e.options, ...(e.name === "tokenize" ? { encoder: encoderFor(e.options, o.baseDir).name } : {}) })),
      });
      const hit = await o.cache.lookup("read", key, ".jsonl");
      if (hit) {
        o.cache.report.read.reused++;
        yield* replayUnit(o, spec, mapper, hit, nextSeq);
      } else {
        o.cache.report.read.computed++;
        yield* computeUnit(o, spec, mapper, input.path, key, nextSeq);
      }
      bytesDone += input.size;
      filesDone++;
      o.progress({ bytesDone, filesDone });
    }
  }
}

async function* computeUnit(o: ReadUnitsOptions, spec: SourceSpec, mapper: RecordMapper, file: string, key: string, nextSeq: () => number): AsyncGenerator<DocRecord> {
  const { ledger } = o;
  const out = o.cache.pending("read", key, ".jsonl");
  const writer = new EventWriter(out.tmp);
  const rowsBefore = mapper.rows;
  const counts: Record<string, number> = {};
  let complete = false;
  // Rows are read ahead into batches for the prefix stages (in worker threads when there are
  // several); every fate is recorded when its turn comes in input order, so the ledger and the
  // cache entry are the same whatever the number of threads.
  async function* batches(): AsyncGenerator<BatchItem[]> {
    let batch: BatchItem[] = [];
    let bytes = 0;
    for await (const item of readSourceFile(spec, o.baseDir, file, mapper)) {
      if (item.kind === "bad") batch.push({ k: "bad", entry: item.entry });
      else {
        const r: DocRecord = { id: item.id, source: item.source, text: item.text, meta: item.meta, origin: item.origin, seq: nextSeq() };
        if (o.copiesOf(r) === 0) batch.push({ k: "drop", r: toBatchRecord(r), reason: "subsampled", detail: { weight: spec.weight } });
        else batch.push({ k: "rec", r: toBatchRecord(r) });
        bytes += item.text.length;
      }
      if (batch.length >= BATCH_RECORDS || bytes >= BATCH_BYTES) {
        yield batch;
        batch = [];
        bytes = 0;
      }
    }
    if (batch.length > 0) yield batch;
  }
  try {
    for await (const { result } of orderedMap(batches(), (b) => o.pool.submit(b), BATCHES_AHEAD)) {
      for (const [name, n] of Object.entries(result.counts)) {
        o.ctx.count(name, n);
        counts[name] = (counts[name] ?? 0) + n;
      }
      for (const { item, record } of unpack(result)) {
        await ledger.flush();
        await writer.drain();
        o.progress();
        if (item.k === "bad") {
          await ledger.quarantined(item.entry);
          writer.add({ k: "bad", entry: item.entry });
        } else if (item.k === "drop") {
          o.ctx.drop(fromBatchRecord(item.r), item.reason, item.detail);
          writer.add({ k: "drop", id: item.r.id, source: item.r.source, file: item.r.file, line: item.r.line, reason: item.reason, ...(item.detail ? { detail: item.detail } : {}) });
        } else {
          const r = record!;
          writer.add(recordEvent(r));
          yield r;
        }
      }
    }
    writer.add({ k: "end", rows: mapper.rows - rowsBefore, counts });
    await writer.close();
    await out.commit();
    complete = true;
  } catch (err) {
    throw recordFailure(err);
  } finally {
    if (!complete) {
      writer.destroy();
      await rm(out.tmp, { force: true });
    }
  }
}

/** A stage that threw on a record (in a worker or here) becomes an error naming the record. */
export function recordFailure(err: unknown): unknown {
  const where = (err as { where?: { file: string; line: number; source: string; id: string } })?.where;
  if (!where || err instanceof SiftpackError) return err;
  return new SiftpackError("SP_STAGE", `a stage failed on record "${where.id}" (source ${where.source}, ${where.file}:${where.line}): ${(err as Error).message}`, { cause: err });
}

async function* replayUnit(o: ReadUnitsOptions, spec: SourceSpec, mapper: RecordMapper, path: string, nextSeq: () => number): AsyncGenerator<DocRecord> {
  const { ledger } = o;
  const ids: string[] = [];
  for await (const e of readEvents(path)) {
    await ledger.flush();
    o.progress();
    switch (e.k) {
      case "bad":
        await ledger.quarantined(e.entry);
        break;
      case "drop": {
        const r: DocRecord = { id: e.id, source: e.source, text: "", meta: {}, origin: { file: e.file, line: e.line }, seq: nextSeq() };
        ids.push(e.id);
        o.ctx.drop(r, e.reason, e.detail);
        break;
      }
      case "rec": {
        const r: DocRecord = { id: e.id, source: e.source, text: e.text, meta: e.meta, origin: { file: e.file, line: e.line }, seq: nextSeq() };
        if (e.tokens !== undefined) r.tokens = tokensFromText(e.tokens);
        ids.push(e.id);
        yield r;
        break;
      }
      case "end":
        mapper.replay(e.rows, ids);
        for (const [name, n] of Object.entries(e.counts)) o.ctx.count(name, n);
        return;
    }
  }
  throw new Error(`cache entry ${path} ends without its end marker`);
}
