// Tokenization in batches on the worker pool, with a per-input-file cache of token ids: ids depend
// only on a record's text and the tokenizer settings, so each cached entry carries the XXH64 of the
// text it came from and is used only while the text is the same. Records of one file arrive
// together and in order, so the cache is read (while batching) and written (while emitting)
// sequentially.
import { rm } from "node:fs/promises";
import { BuildCache } from "../cache/build-cache.js";
import { TokenStoreReader, TokenStoreWriter } from "../cache/token-store.js";
import { unitId, recordFailure } from "./record-failure.js";
import { xxh64String } from "../lib/hash.js";
import { toolVersion } from "../output/manifest.js";
import { orderedMap } from "../parallel/pool.js";
import { BATCH_BYTES, BATCH_RECORDS, BATCHES_AHEAD, type RecordPool } from "../parallel/record-pool.js";
import type { BatchOut } from "../parallel/record-batch.js";
import { FrameWriter, decodeFrames } from "../cache/record-events.js";
import type { Stage } from "../stages/stage.js";
import type { DocRecord } from "../types.js";

interface Pending {
  records: DocRecord[];
  /** Ids found in the cache, by position; undefined where the pool computes them. */
  cached: (Uint32Array | undefined)[];
  /** XXH64 of each record's text, by position, when the cache is used (looked up with it, written with it). */
  hashes: bigint[];
  /** Frames of the records the pool computes, and how many. */
  misses: FrameWriter;
  missed: number;
}

const EMPTY: BatchOut = { frames: new Uint8Array(0), counts: {}, rows: 0, records: 0 };
const pending = (): Pending => ({ records: [], cached: [], hashes: [], misses: new FrameWriter(), missed: 0 });

/**
 * Ids held back while every record of a file so far came from its cache entry: if the whole file
 * does, the entry already holds them and is not written again (a rebuild that passes a unit again
 * only because a decision dropped some of its records). Past this many ids the entry is written as
 * it goes, so what is held stays bounded.
 */
const HOLD_IDS = 1 << 23;

/**
 * A stage of form `record` that `encodes` (sets tokens from the text alone), run on the pool.
 * `cache` undefined: no caching; batches still run in parallel. `encoderName` identifies the
 * stage and its tokenizer in cache keys; `part` names the part of a file being read when a file is read in parts.
 */
export function parallelTokenize(o: unknown, pool: RecordPool, cache: BuildCache | undefined, encoderName: string, part: () => string | undefined = () => undefined): Stage {
  // The encoder's name carries a hash of a tokenizer file's content, so editing the file invalidates the entries.
  const keyOf = (r: DocRecord) => BuildCache.key({ unit: "tokens", store: 2, siftpack: toolVersion(), source: r.source, file: r.origin.file, part: part() ?? null, options: o, encoder: encoderName });
  return async function* tokenize(input, ctx) {
    // Lookup side: the cache entry of the file now being batched.
    let reading: { id: string; reader?: TokenStoreReader } | undefined;
    // Emitting side: the entry being written for the file now being emitted; none while every record so far came from the cache (`held`).
    let writing: { writer: TokenStoreWriter; tmp: string; commit: () => Promise<void> } | undefined;
    let emitting: string | undefined;
    let held: { line: number; hash: bigint; ids: Uint32Array }[] = [];
    let heldIds = 0;
    const closeWriting = async (complete: boolean) => {
      held = [];
      heldIds = 0;
      emitting = undefined;
      if (!writing) return;
      const w = writing;
      writing = undefined;
      if (complete) {
        await w.writer.close();
        await w.commit();
      } else {
        // Failing already: the write's own error (if any) would hide the first one.
        await w.writer.close().catch(() => undefined);
        await rm(w.tmp, { force: true });
      }
    };

    async function* batches(): AsyncGenerator<Pending> {
      let p = pending();
      for await (const r of input) {
        let hit: Uint32Array | undefined;
        // A conversation's ids come with its layout, which the store does not hold: always computed.
        if (cache && !r.turns) {
          const id = unitId(r.source, r.origin.file);
          if (reading?.id !== id) {
            reading?.reader?.close();
            const found = await cache.lookup("tokens", keyOf(r), ".bin");
            if (found) cache.report.tokens.reused++;
            else cache.report.tokens.computed++;
            reading = { id, reader: found ? new TokenStoreReader(found) : undefined };
          }
          const hash = xxh64String(r.text);
          p.hashes[p.records.length] = hash;
          hit = reading.reader?.find(r.origin.line, hash);
          if (hit) cache.report.tokens.records_reused++;
          else cache.report.tokens.records_computed++;
        }
        p.records.push(r);
        p.cached.push(hit);
        if (!hit) {
          p.misses.rec(r);
          p.missed++;
        }
        if (p.records.length >= BATCH_RECORDS || p.misses.length >= BATCH_BYTES) {
          yield p;
          p = pending();
        }
      }
      reading?.reader?.close();
      if (p.records.length > 0) yield p;
    }

    let complete = false;
    try {
      for await (const { item: p, result } of orderedMap(batches(), (p) => (p.missed ? pool.submit(p.misses.take()) : Promise.resolve(EMPTY)), BATCHES_AHEAD)) {
        const computed = [...decodeFrames(result.frames)];
        let next = 0;
        for (let i = 0; i < p.records.length; i++) {
          const r = p.records[i];
          let tokens = p.cached[i];
          let chat: Uint32Array | undefined;
          if (!tokens) {
            const got = computed[next++];
            if (got.k === "drop") {
              ctx.drop(r, got.reason, got.detail);
              continue;
            }
            if (got.k !== "rec") throw new Error(`tokenizing: a ${got.k} frame came back for a record`);
            tokens = got.r.tokens!;
            chat = got.r.chat;
          }
          if (cache && !r.turns) {
            const id = unitId(r.source, r.origin.file);
            if (emitting !== id) {
              await closeWriting(true);
              emitting = id;
            }
            const hash = p.hashes[i];
            if (!writing && p.cached[i] && heldIds + tokens.length <= HOLD_IDS) {
              held.push({ line: r.origin.line, hash, ids: tokens });
              heldIds += tokens.length;
            } else {
              if (!writing) {
                const out = cache.pending("tokens", keyOf(r), ".bin");
                writing = { writer: new TokenStoreWriter(out.tmp), tmp: out.tmp, commit: out.commit };
                for (const h of held) writing.writer.add(h.line, h.hash, h.ids);
                held = [];
                heldIds = 0;
              }
              writing.writer.add(r.origin.line, hash, tokens);
              if (writing.writer.backlog > 0) await writing.writer.settle();
            }
          }
          r.tokens = tokens;
          if (chat) r.chat = chat;
          yield r;
        }
      }
      complete = true;
    } catch (err) {
      throw recordFailure(err);
    } finally {
      await closeWriting(complete);
    }
  };
}
