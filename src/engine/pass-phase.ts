// The passes after read: each unit's records (with the decisions since they were last written
// applied) go through the stages of form `record` on the worker pool (an encoding stage with the
// token cache) and of form `unit`, then to the collector of the next keyed stage; records and
// drops are written per unit.
import { orderedMap } from "../parallel/pool.js";
import { BATCH_BYTES, BATCH_RECORDS, BATCHES_AHEAD, recordPool, type RecordPool } from "../parallel/record-pool.js";
import { recordBatches } from "../parallel/record-batch.js";
import { decodeFrames, dropRecord } from "../cache/record-events.js";
import { parallelTokenize } from "./cached-tokenize.js";
import { recordFailure } from "./record-failure.js";
import type { BuildCache } from "../cache/build-cache.js";
import { formOf, type Stage } from "../stages/stage.js";
import { STAGES } from "../stages/index.js";
import type { StageEntry } from "../pipeline/config.js";
import type { DocRecord, StageContext } from "../types.js";

/** Per-record stages as one stream stage: batches go to the pool, results come back in order. */
export function poolStage(pool: RecordPool): Stage {
  return async function* pooled(input, ctx) {
    try {
      for await (const { result } of orderedMap(recordBatches(input, BATCH_RECORDS, BATCH_BYTES), (b) => pool.submit(b), BATCHES_AHEAD)) {
        for (const [name, n] of Object.entries(result.counts)) ctx.count(name, n);
        for (const e of decodeFrames(result.frames)) {
          if (e.k === "drop") ctx.drop(dropRecord(e), e.reason, e.detail);
          else if (e.k === "rec") yield e.r;
        }
      }
    } catch (err) {
      throw recordFailure(err);
    }
  };
}

/**
 * The stream stages of a per-unit pass: consecutive stages of form `record` share one pool; a
 * stage that `encodes` has its own (and the token cache); stages of form `unit` run here, one
 * instance per unit, and hand over a summary.
 */
export class PassStages {
  private readonly pools: RecordPool[] = [];
  private readonly parts: ((s: AsyncIterable<DocRecord>, ctx: StageContext, summaries: unknown[]) => AsyncIterable<DocRecord>)[] = [];
  /** The part of a file being run (its byte range), for the token cache's keys. */
  private part: string | undefined;

  private constructor() {}

  static async create(entries: StageEntry[], baseDir: string, seed: number, threads: number, cache: BuildCache): Promise<PassStages> {
    const self = new PassStages();
    let run: StageEntry[] = [];
    const flush = () => {
      if (run.length === 0) return;
      const pool = recordPool({ stages: run, baseDir, seed }, threads);
      self.pools.push(pool);
      const stage = poolStage(pool);
      self.parts.push((s, ctx) => stage(s, ctx));
      run = [];
    };
    for (const [k, e] of entries.entries()) {
      const def = STAGES[e.name];
      const f = formOf(def, e.options);
      if (f.kind === "unit") {
        flush();
        const stage = await def.create(e.options, { baseDir, workers: threads, perFile: true });
        self.parts.push((s, ctx, summaries) => stage(s, { ...ctx, summarize: (v) => (summaries[k] = v) }));
      } else if (f.kind === "record" && f.encodes) {
        flush();
        const pool = recordPool({ stages: [e], baseDir, seed }, threads);
        self.pools.push(pool);
        const stage = parallelTokenize(e.options, pool, cache, `${e.name}:${def.identity?.(e.options, baseDir) ?? ""}`, () => self.part);
        self.parts.push((s, ctx) => stage(s, ctx));
      } else run.push(e);
    }
    flush();
    return self;
  }

  /** The unit's records through every stage; `summaries[k]` gets the summary of entry k, if it has one. */
  run(input: AsyncIterable<DocRecord>, ctx: StageContext, summaries: unknown[], part?: { start: number; end: number }): AsyncIterable<DocRecord> {
    this.part = part ? `${part.start}-${part.end}` : undefined;
    let s = input;
    for (const part of this.parts) s = part(s, ctx, summaries);
    return s;
  }

  async close(): Promise<void> {
    for (const p of this.pools) await p.close();
  }
}
