// Batches of records for the per-record stages: what goes to a worker, what comes back, and the
// handler that runs the stages on a batch (the same code in a worker thread or in-thread). A batch
// travels as one buffer of record frames (src/cache/record-events.ts), moved to and from the worker
// rather than cloned record by record; the frames that come back are the unit file's bytes.
import { STAGES } from "../stages/index.js";
import { failPoint } from "../lib/crash-point.js";
import { FrameWriter, decodeFrames } from "../cache/record-events.js";
import type { Stage } from "../stages/stage.js";
import type { StageEntry } from "../pipeline/config.js";
import type { DocRecord, StageContext } from "../types.js";

export interface BatchInit {
  stages: StageEntry[];
  baseDir: string;
  seed: number;
}

/** Results in input order: a frame per item (kept record with its tokens, drop, or bad row passed through). */
export interface BatchOut {
  frames: Uint8Array;
  /** Stage counters (ctx.count) raised while running the batch. */
  counts: Record<string, number>;
  /** Frames in the batch (rows), and kept records among them. */
  rows: number;
  records: number;
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

const quiet = { info() {}, warn() {}, error() {}, debug() {} };

/** Builds the handler: creates the stages once, then runs each record through them alone. */
export async function batchHandler(init: BatchInit): Promise<(frames: Uint8Array) => Promise<BatchOut>> {
  const stages: Stage[] = [];
  for (const e of init.stages) stages.push(await STAGES[e.name].create(e.options, { baseDir: init.baseDir }));
  return async (frames) => {
    // Output is about the input's size plus token ids (2 bytes each for most encodings, ~1 per 3 bytes of text).
    const out = new FrameWriter(frames.byteLength + (frames.byteLength >> 1) + 1024);
    const counts: Record<string, number> = {};
    let rows = 0;
    let records = 0;
    for (const e of decodeFrames(frames)) {
      rows++;
      if (e.k !== "rec") {
        out.event(e);
        continue;
      }
      let dropped = false;
      const ctx: StageContext = {
        seed: init.seed,
        // Stages run here only when they are per-record: they write no files of their own.
        log: quiet,
        workDir: "",
        addOutputFile() {},
        count: (name, n = 1) => (counts[name] = (counts[name] ?? 0) + n),
        drop: (r, reason, detail) => {
          dropped = true;
          out.drop(r, reason, detail);
        },
      };
      let stream: AsyncIterable<DocRecord> = one(e.r);
      for (const s of stages) stream = s(stream, ctx);
      let result: DocRecord | undefined;
      try {
        failPoint(e.r.id);
        for await (const r of stream) result = r;
      } catch (err) {
        throw new RecordError((err as Error)?.message ?? String(err), { file: e.r.origin.file, line: e.r.origin.line, source: e.r.source, id: e.r.id });
      }
      if (result) {
        out.rec(result);
        records++;
      } else if (!dropped) throw new RecordError("a per-record stage let a record go without dropping it", { file: e.r.origin.file, line: e.r.origin.line, source: e.r.source, id: e.r.id });
    }
    return { frames: out.take(), counts, rows, records };
  };
}

/** Records to frames, cut into batches of at most BATCH_RECORDS records or about BATCH_BYTES. */
export async function* recordBatches(input: AsyncIterable<DocRecord>, records: number, bytes: number): AsyncGenerator<Uint8Array> {
  const w = new FrameWriter(bytes + (bytes >> 2));
  let n = 0;
  for await (const r of input) {
    w.rec(r);
    if (++n >= records || w.length >= bytes) {
      yield w.take();
      n = 0;
    }
  }
  if (n > 0) yield w.take();
}
