// Reading the sources one input file at a time, each file a unit: its rows go through the leading
// per-record stages, and the outcome (quarantined rows, drops, surviving records) is cached so a
// rerun replays the file instead of reading and processing it again.
import { rm } from "node:fs/promises";
import { readSourceFile, RecordMapper, type SourceSpec } from "../sources/source.js";
import { BuildCache } from "../cache/build-cache.js";
import { EventWriter, readEvents, recordEvent, tokensFromText } from "../cache/record-events.js";
import { toolVersion } from "../output/manifest.js";
import type { Ledger } from "../output/ledger.js";
import type { PipelineConfig, StageEntry } from "./config.js";
import type { Stage } from "../stages/stage.js";
import type { DocRecord, StageContext } from "../types.js";

export interface ReadUnitsOptions {
  config: PipelineConfig;
  baseDir: string;
  /** Files per source (relative paths) with their fingerprints. */
  inputs: { source: string; path: string; size: number; xxh64: string }[];
  cache: BuildCache;
  ledger: Ledger;
  ctx: StageContext;
  /** The leading per-record stages, built. */
  prefix: { entry: StageEntry; stage: Stage }[];
  /** How many times train sees a record of a weighted source (0 = subsampled away). */
  copiesFor(spec: SourceSpec, r: DocRecord): number;
  copies: WeakMap<DocRecord, number>;
  /** The read-unit key of each input file, for caches further down that depend on it. */
  unitKeys: Map<string, string>;
  progress(): void;
}

export function unitId(source: string, file: string): string {
  return `${source}\u0000${file}`;
}

/** Every record of every source, file by file, after the prefix stages. */
export async function* readUnits(o: ReadUnitsOptions): AsyncGenerator<DocRecord> {
  let seq = 0;
  const nextSeq = () => seq++;
  for (const spec of o.config.sources) {
    const mapper = new RecordMapper(spec);
    for (const input of o.inputs.filter((i) => i.source === spec.name)) {
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
        prefix: o.prefix.map((p) => ({ [p.entry.name]: p.entry.options })),
      });
      o.unitKeys.set(unitId(spec.name, input.path), key);
      const hit = await o.cache.lookup("read", key, ".jsonl.gz");
      if (hit) {
        o.cache.report.read.reused++;
        yield* replayUnit(o, spec, mapper, hit, nextSeq);
      } else {
        o.cache.report.read.computed++;
        yield* computeUnit(o, spec, mapper, input.path, key, nextSeq);
      }
    }
  }
}

async function* computeUnit(o: ReadUnitsOptions, spec: SourceSpec, mapper: RecordMapper, file: string, key: string, nextSeq: () => number): AsyncGenerator<DocRecord> {
  const { ledger } = o;
  const out = o.cache.pending("read", key, ".jsonl.gz");
  const writer = new EventWriter(out.tmp);
  const rowsBefore = mapper.rows;
  let complete = false;
  try {
    async function* rows(): AsyncGenerator<DocRecord> {
      for await (const item of readSourceFile(spec, o.baseDir, file, mapper)) {
        await ledger.flush();
        await writer.drain();
        o.progress();
        if (item.kind === "bad") {
          await ledger.quarantined(item.entry);
          writer.add({ k: "bad", entry: item.entry });
          continue;
        }
        const r: DocRecord = { id: item.id, source: item.source, text: item.text, meta: item.meta, origin: item.origin, seq: nextSeq() };
        const n = o.copiesFor(spec, r);
        if (n === 0) {
          unitCtx.drop(r, "subsampled", { weight: spec.weight });
          continue;
        }
        if (n !== 1) o.copies.set(r, n);
        yield r;
      }
    }
    const unitCtx: StageContext = {
      ...o.ctx,
      drop(r, reason, detail) {
        o.ctx.drop(r, reason, detail);
        writer.add({ k: "drop", id: r.id, source: r.source, file: r.origin.file, line: r.origin.line, reason, ...(detail ? { detail } : {}) });
      },
    };
    let stream: AsyncIterable<DocRecord> = rows();
    for (const p of o.prefix) stream = p.stage(stream, unitCtx);
    for await (const r of stream) {
      writer.add(recordEvent(r));
      yield r;
    }
    writer.add({ k: "end", rows: mapper.rows - rowsBefore });
    await writer.close();
    await out.commit();
    complete = true;
  } finally {
    if (!complete) {
      writer.destroy();
      await rm(out.tmp, { force: true });
    }
  }
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
        const n = o.copiesFor(spec, r);
        if (n !== 1) o.copies.set(r, n);
        yield r;
        break;
      }
      case "end":
        mapper.replay(e.rows, ids);
        return;
    }
  }
  throw new Error(`cache entry ${path} ends without its end marker`);
}
