// The contract every stage file fulfils: an option schema and a function from records to records.
import type { Schema } from "../pipeline/schema.js";
import type { DocRecord, StageContext } from "../types.js";

/** A running stage: async iterable of records in, async iterable of records out. */
export type Stage = (input: AsyncIterable<DocRecord>, ctx: StageContext) => AsyncIterable<DocRecord>;

/** What a stage may need to know when it is built. */
export interface StageEnv {
  /** The pipeline file's directory: relative paths in stage options are resolved against it. */
  baseDir: string;
  /** Threads the run may use (`run --workers`); stages with threads of their own follow it by default. */
  workers?: number;
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
  /** Extra lines for `siftpack plan` (derived settings). */
  explain?(options: O): Record<string, unknown>;
}

export function defineStage<O>(def: StageDefinition<O>): StageDefinition<O> {
  return def;
}
