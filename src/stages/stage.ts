// The contract every stage file fulfils: an option schema and a function from records to records.
import type { Schema } from "../pipeline/schema.js";
import type { DocRecord, Logger, StageContext } from "../types.js";

/** A running stage: async iterable of records in, async iterable of records out. */
export type Stage = (input: AsyncIterable<DocRecord>, ctx: StageContext) => AsyncIterable<DocRecord>;

/** What a stage may need to know when it is built. */
export interface StageEnv {
  /** The pipeline file's directory: relative paths in stage options are resolved against it. */
  baseDir: string;
  /** Threads the run may use (`run --workers`); stages with threads of their own follow it by default. */
  workers?: number;
  /**
   * Set when the instance sees one input file's records (a per-file phase of the task plan): a
   * stage with `gather` then reports its whole-stream findings through `ctx.summarize` instead of
   * acting on them, and `gather` acts once on every file's summary.
   */
  perFile?: boolean;
}

/** What `gather` may do: count, log, and write build files. */
export interface GatherContext {
  seed: number;
  baseDir: string;
  log: Logger;
  count(name: string, n?: number): void;
  /** The build directory in progress. */
  workDir: string;
  addOutputFile(relPath: string): void;
}

export interface StageDefinition<O = any> {
  /** The key used in the pipeline file (`- normalize: {…}`). */
  name: string;
  /** One-line summary for `plan`. */
  summary: string;
  options: Schema<O>;
  /** Builds the stage for one run (may load resources, e.g. a tokenizer or a protected set). */
  create(options: O, env: StageEnv): Stage | Promise<Stage>;
  /**
   * Each record's fate depends only on that record, the options and the seed, with no state
   * across records: a run of such stages at the head of the pipeline is cached per input file.
   */
  perRecord?: boolean;
  /**
   * Present when the stage's whole-stream work splits into one instance per input file (created
   * with `env.perFile`, each ending with `ctx.summarize(value)`, a JSON value) and this step, which
   * gets the summaries in input order once every file is done. Such a stage runs per file in a
   * build's task plan instead of in one whole-stream task.
   */
  gather?(summaries: unknown[], options: O, ctx: GatherContext): void | Promise<void>;
  /** Extra lines for `siftpack plan` (derived settings). */
  explain?(options: O): Record<string, unknown>;
}

export function defineStage<O>(def: StageDefinition<O>): StageDefinition<O> {
  return def;
}
