// Batches of records for the per-record stages: what goes to a worker, what comes back, and the
// handler that runs the stages on a batch (the same code in a worker thread or in-thread).
import { STAGES } from "../stages/index.js";
import { failPoint } from "../lib/crash-point.js";
import type { Stage } from "../stages/stage.js";
import type { StageEntry } from "../pipeline/config.js";
import type { DocRecord, StageContext } from "../types.js";
import type { QuarantineEntry } from "../sources/source.js";

export interface BatchInit {
  stages: StageEntry[];
  baseDir: string;
  seed: number;
}

/** A record as sent to a worker (origin flattened; tokens travel separately). */
export interface BatchRecord {
  id: string;
  source: string;
  text: string;
  meta: Record<string, unknown>;
  file: string;
  line: number;
  seq: number;
  split?: string;
  cluster?: string;
}

/** Items keep their input order; `bad` and `drop` items pass through untouched, for the ledger. */
export type BatchItem =
  | { k: "rec"; r: BatchRecord }
  | { k: "bad"; entry: QuarantineEntry; i?: number }
  | { k: "drop"; r: BatchRecord; reason: string; detail?: Record<string, unknown> };

/** Results in the same order: tokens of kept records concatenated in `tokens`, their ends in `ends`. */
export interface BatchOut {
  items: BatchItem[];
  /** Stage counters (ctx.count) raised while running the batch. */
  counts: Record<string, number>;
  tokens: Uint32Array;
  /** For each item: -1 if it is not a kept record with tokens, else the end offset of its tokens. */
  ends: Int32Array;
}

export function toBatchRecord(r: DocRecord): BatchRecord {
  return { id: r.id, source: r.source, text: r.text, meta: r.meta, file: r.origin.file, line: r.origin.line, seq: r.seq, split: r.split, cluster: r.cluster };
}

export function fromBatchRecord(b: BatchRecord, tokens?: Uint32Array): DocRecord {
  const r: DocRecord = { id: b.id, source: b.source, text: b.text, meta: b.meta, origin: { file: b.file, line: b.line }, seq: b.seq };
  if (b.split !== undefined) r.split = b.split;
  if (b.cluster !== undefined) r.cluster = b.cluster;
  if (tokens) r.tokens = tokens;
  return r;
}

/** An error in a stage, with the record it was processing. */
export class RecordError extends Error {
  readonly where: { file: string; line: number; source: string; id: string };
  constructor(message: string, where: RecordError["where"]) {
    super(message);
    this.where = where;
  }
}

async function* one(r: DocRecord): AsyncGenerator<DocRecord> {
  yield r;
}

/** Builds the handler: creates the stages once, then runs each record through them alone. */
export async function batchHandler(init: BatchInit): Promise<(items: BatchItem[]) => Promise<BatchOut>> {
  const stages: Stage[] = [];
  for (const e of init.stages) stages.push(await STAGES[e.name].create(e.options, { baseDir: init.baseDir }));
  return async (items) => {
    const out: BatchItem[] = [];
    const counts: Record<string, number> = {};
    const kept: Uint32Array[] = [];
    const ends = new Int32Array(items.length).fill(-1);
    let total = 0;
    for (const item of items) {
      if (item.k !== "rec") {
        out.push(item);
        continue;
      }
      let dropped: BatchItem | undefined;
      const ctx: StageContext = {
        seed: init.seed,
        // Stages run here only when they are per-record: they write no files of their own.
        log: { info() {}, warn() {}, error() {}, debug() {} },
        workDir: "",
        addOutputFile() {},
        count: (name, n = 1) => (counts[name] = (counts[name] ?? 0) + n),
        drop: (r, reason, detail) => (dropped = { k: "drop", r: toBatchRecord(r), reason, ...(detail ? { detail } : {}) }),
      };
      let stream: AsyncIterable<DocRecord> = one(fromBatchRecord(item.r));
      for (const s of stages) stream = s(stream, ctx);
      let result: DocRecord | undefined;
      try {
        failPoint(item.r.id);
        for await (const r of stream) result = r;
      } catch (err) {
        throw new RecordError((err as Error)?.message ?? String(err), { file: item.r.file, line: item.r.line, source: item.r.source, id: item.r.id });
      }
      if (result) {
        out.push({ k: "rec", r: toBatchRecord(result) });
        if (result.tokens) {
          kept.push(result.tokens);
          total += result.tokens.length;
          ends[out.length - 1] = total;
        }
      } else if (dropped) out.push(dropped);
    }
    const tokens = new Uint32Array(total);
    let at = 0;
    for (const t of kept) {
      tokens.set(t, at);
      at += t.length;
    }
    return { items: out, counts, tokens, ends };
  };
}

/** Walks a batch result in order: kept records (with their tokens) and the other items. */
export function* unpack(out: BatchOut): Generator<{ item: BatchItem; record?: DocRecord }> {
  let start = 0;
  for (let i = 0; i < out.items.length; i++) {
    const item = out.items[i];
    if (item.k !== "rec") {
      yield { item };
      continue;
    }
    const end = out.ends[i];
    const tokens = end >= 0 ? out.tokens.slice(start, end) : undefined;
    if (end >= 0) start = end;
    yield { item, record: fromBatchRecord(item.r, tokens) };
  }
}
