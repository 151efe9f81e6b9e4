// The read phase: each input file of the task's share is read, mapped and run through the leading
// per-record stages (in batches on the worker pool), its fates written in row order to
// read/units/<u>.bin. The same file is the build cache's entry for it, so a rerun with the same
// file and settings links it instead of redoing the work. A file that cannot be read to its end fails
// the run here unless its source sets accept_truncated; accepted, the loss rides in the end frame.
import { open } from "node:fs/promises";
import { join } from "node:path";
import { readSourceFile, RecordMapper } from "../sources/source.js";
import { BuildCache } from "../cache/build-cache.js";
import { FrameWriter, readEnd, type UnitEvent, type UnitTruncation } from "../cache/record-events.js";
import { toolVersion } from "../output/manifest.js";
import { orderedMap } from "../parallel/pool.js";
import { BATCH_BYTES, BATCH_RECORDS, BATCHES_AHEAD, type RecordPool } from "../parallel/record-pool.js";
import { recordFailure } from "./record-failure.js";
import { STAGES } from "../stages/index.js";
import { crashPoint } from "../lib/crash-point.js";
import { hashFile, hex64, loadHasher } from "../lib/hash.js";
import { inputHashes } from "../cache/input-hashes.js";
import { SiftpackError, describeSystemError } from "../errors.js";
import type { StageEntry } from "../pipeline/config.js";
import { unitBytes, unitsFile, type TaskEnv } from "./unit-io.js";
import { AtomicStream, linkAtomic, linkOrCopy } from "./workdir.js";

export interface ReadUnitResult {
  rows: number;
  records: number;
  /** The whole file's size and XXH64, from the unit that starts the file (a later part leaves them out). */
  size?: number;
  xxh64?: string;
  /** Physical lines in a part of a file (later parts number their lines after the earlier parts' lines). */
  lines?: number;
  counts: Record<string, number>;
  /** The unit's input could not be read to its end (accepted by the source). */
  truncated?: UnitTruncation;
  /** The unit file's fingerprint: the cache key of what it was read from. */
  fp: string;
}

export async function readUnit(env: TaskEnv, u: number, entries: StageEntry[], pool: RecordPool, cache: BuildCache): Promise<ReadUnitResult> {
  const { p } = env;
  const unit = env.units[u];
  const spec = unit.source;
  const abs = join(p.baseDir, unit.path);
  const fail = (err: unknown): never => {
    throw new SiftpackError("SP_INPUT_MISSING", `source "${spec.name}": cannot read ${unit.path}: ${describeSystemError(err)}`, { cause: err });
  };
  // The whole file is hashed once, by its first unit; a later part is known by its own bytes.
  // Both are kept in the cache under the file's identity, so an unchanged input is not read again to hash it.
  const { whole, part } = await inputHashes(cache, abs, unit.range, async () => ({
    whole: !unit.range || unit.range.start === 0 ? await hashFile(abs).catch(fail) : undefined,
    part: unit.range ? await hashRange(abs, unit.range).catch(fail) : undefined,
  }));
  const key = BuildCache.key({
    range: unit.range ?? null,
    part: part?.xxh64 ?? null,
    unit: "read",
    // Bumped when what reading a file yields changes within a version (2: record frames, truncated files counted as loss; 3: default ids named by file and line; 4: a part keyed by its own bytes).
    reading: 4,
    siftpack: toolVersion(),
    source: spec,
    file: unit.path,
    // A part is known by its own bytes alone (its records number their rows and lines from its start):
    // rows appended to a file leave its earlier parts' entries valid.
    size: unit.range ? null : unit.size,
    xxh64: unit.range ? null : (whole?.xxh64 ?? null),
    seed: p.config.seed,
    // What a stage depends on beyond its options (a tokenizer file's content) is part of the key.
    prefix: entries.map((e) => ({ [e.name]: e.options, ...(STAGES[e.name].identity ? { identity: STAGES[e.name].identity!(e.options, p.baseDir) } : {}) })),
  });
  const out = unitsFile(env.plan.workDir, env.phase.name, u);
  const hit = await cache.lookup("read", key, ".bin");
  let end: Extract<UnitEvent, { k: "end" }> | undefined;
  if (hit) {
    cache.report.read.reused++;
    end = await readEnd(hit);
    if (!end) throw new SiftpackError("SP_OUTPUT", `cache entry ${hit} ends without its end marker; remove it and run again`);
    if (end.truncated && !spec.accept_truncated) throw truncatedError(env, u, end.truncated);
    await linkAtomic(hit, out);
    env.meter.records(end.rows);
    env.meter.bytes(unitBytes(unit));
  } else {
    cache.report.read.computed++;
    end = await computeUnit(env, u, pool, out);
    env.meter.bytes(unitBytes(unit));
    // The unit file is never written again once complete: the cache entry is a second name for it.
    const pending = cache.pending("read", key, ".bin");
    await linkOrCopy(out, pending.tmp);
    await pending.commit();
  }
  return { rows: end.rows, records: end.records, size: whole?.size, xxh64: whole?.xxh64, lines: part?.lines, counts: end.counts, fp: key, ...(end.truncated ? { truncated: end.truncated } : {}) };
}

async function computeUnit(env: TaskEnv, u: number, pool: RecordPool, path: string): Promise<Extract<UnitEvent, { k: "end" }>> {
  const unit = env.units[u];
  const spec = unit.source;
  const mapper = new RecordMapper(spec);
  const out = await AtomicStream.open(path);
  const counts: Record<string, number> = {};
  let records = 0;
  let truncated: UnitTruncation | undefined;
  env.meter.reading(join(env.p.baseDir, unit.path), unit.range?.start ?? 0, unitBytes(unit));
  // Rows as frames, cut into batches for the pool.
  async function* batches(): AsyncGenerator<Uint8Array> {
    const w = new FrameWriter(BATCH_BYTES + (BATCH_BYTES >> 2));
    let n = 0;
    for await (const item of readSourceFile(spec, env.p.baseDir, unit.path, mapper, unit.range)) {
      if (item.kind === "truncated") {
        // The file's last item; not a row, so no frame: it goes into the end frame.
        truncated = { rows_read: item.rows_read, ...item.truncated };
        continue;
      }
      const i = mapper.rows - 1;
      if (item.kind === "bad") w.bad(i, item.entry);
      else w.rec({ id: item.id, source: item.source, text: item.text, meta: item.meta, origin: item.origin, seq: i, ...(item.turns ? { turns: item.turns } : {}) });
      if (++n >= BATCH_RECORDS || w.length >= BATCH_BYTES) {
        yield w.take();
        n = 0;
      }
    }
    if (n > 0) yield w.take();
  }
  try {
    for await (const { result } of orderedMap(batches(), (b) => pool.submit(b), BATCHES_AHEAD)) {
      for (const [name, n] of Object.entries(result.counts)) counts[name] = (counts[name] ?? 0) + n;
      records += result.records;
      await out.write(result.frames);
      crashPoint("read");
      env.meter.records(result.rows);
    }
    if (truncated && !spec.accept_truncated) throw truncatedError(env, u, truncated);
    const w = new FrameWriter(1024);
    w.end(mapper.rows, records, counts, truncated);
    await out.write(w.take());
    await out.commit();
    return { k: "end", rows: mapper.rows, records, counts, ...(truncated ? { truncated } : {}) };
  } catch (err) {
    await out.abort();
    throw recordFailure(err);
  }
}

/**
 * The one-line error for a truncated input whose source does not accept it, e.g. `source "tickets":
 * tickets/2026-03.jsonl.gz is truncated (corrupt gzip data: unexpected end of file) after 1501 rows,
 * 40213 of 81920 bytes read; set accept_truncated: true on the source to build from what could be read`.
 */
export function truncatedError(env: TaskEnv, u: number, t: UnitTruncation): SiftpackError {
  const unit = env.units[u];
  const rows = (n: number) => `${n} row${n === 1 ? "" : "s"}`;
  const facts = [`after ${rows(t.rows_read)}${unit.range && unit.range.start > 0 ? ` of the part from byte ${unit.range.start}` : ""}`];
  if (t.rows_lost !== undefined) facts.push(`${rows(t.rows_lost)} lost`);
  if (t.bytes_read !== undefined && t.size !== undefined) facts.push(`${t.bytes_read} of ${t.size} bytes read`);
  return new SiftpackError(
    "SP_INPUT_FORMAT",
    `source "${unit.source.name}": ${unit.path} is truncated (${t.error}) ${facts.join(", ")}; set accept_truncated: true on the source to build from what could be read`,
  );
}

/** XXH64 and physical line count of bytes [start, end) of a file. */
async function hashRange(path: string, range: { start: number; end: number }): Promise<{ xxh64: string; lines: number }> {
  const api = await loadHasher();
  const h = api.create64(0n);
  const fh = await open(path, "r");
  let lines = 0;
  try {
    const buf = Buffer.allocUnsafe(1 << 20);
    for (let pos = range.start; pos < range.end; ) {
      const { bytesRead } = await fh.read(buf, 0, Math.min(buf.length, range.end - pos), pos);
      if (bytesRead === 0) break;
      const chunk = buf.subarray(0, bytesRead);
      h.update(chunk);
      for (let i = chunk.indexOf(10); i >= 0; i = chunk.indexOf(10, i + 1)) lines++;
      pos += bytesRead;
    }
  } finally {
    await fh.close();
  }
  return { xxh64: hex64(h.digest()), lines };
}
