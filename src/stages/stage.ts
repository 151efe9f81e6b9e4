// The contract every stage file fulfils: an option schema, a function from records to records, and
// a declaration of how the stage's work splits, from which the build engine plans its phases.
import type { Schema } from "../pipeline/schema.js";
import type { DocRecord, Logger, StageContext } from "../types.js";
import type { KeyedForm } from "./keyed.js";

/** A running stage: async iterable of records in, async iterable of records out. */
export type Stage = (input: AsyncIterable<DocRecord>, ctx: StageContext) => AsyncIterable<DocRecord>;

/** What a stage may need to know when it is built. */
export interface StageEnv {
  /** The pipeline file's directory: relative paths in stage options are resolved against it. */
  baseDir: string;
  /** Threads the run may use (`run --workers`); stages with threads of their own follow it by default. */
  workers?: number;
  /**
   * Set when the instance sees one unit's records (a per-unit phase): a stage of form `unit` then
   * reports its whole-stream findings through `ctx.summarize` instead of acting on them, and the
   * form's `gather` acts once on every unit's summary.
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

/**
 * How a stage's work splits, so that a build runs it on parts of the input at once (one task per
 * input file or part, one per partition of keys) with the same result as one stream through `create`:
 *
 * - `record`: each record's fate depends only on that record, the options and the seed (no state
 *   across records). Runs anywhere, in batches on worker threads. `encodes`: the stage only sets
 *   `tokens` from `text` (the engine may then reuse earlier ids of an unchanged text).
 * - `unit`: one instance per unit (created with `env.perFile`, ending with `ctx.summarize(value)`,
 *   a JSON value), then `gather` once with the summaries in input order.
 * - `keyed`: each unit's records emit keyed material, partition tasks decide per key partition (and
 *   an optional single `resolve` joins their results), and whichever phase reads the records next
 *   applies the decisions (see keyed.ts).
 * - `whole`: one instance must see every record in order (the default; the build runs it as one task).
 * - `sink`: the stage consumes the finished token stream (packing): the build's last phase does its
 *   work from the stage's options (see output-settings.ts); as a stream stage it passes records on.
 */
export type StageForm<O = any> =
  | { kind: "record"; encodes?: boolean }
  | { kind: "unit"; gather(summaries: unknown[], options: O, ctx: GatherContext): void | Promise<void> }
  | KeyedForm<O>
  | { kind: "whole" }
  | { kind: "sink" };

export interface StageDefinition<O = any> {
  /** The key used in the pipeline file (`- normalize: {…}`). */
  name: string;
  /** One-line summary for `plan`. */
  summary: string;
  options: Schema<O>;
  /** Builds the stage for one run (may load resources, e.g. a tokenizer or a protected set). */
  create(options: O, env: StageEnv): Stage | Promise<Stage>;
  /** How the work splits (a function of the options where they decide it); absent means `whole`. */
  form?: StageForm<O> | ((options: O) => StageForm<O>);
  /**
   * What the stage's result depends on besides its options and the records, as a short string (a
   * tokenizer file's content hash): part of the build cache's keys, so a change invalidates them.
   */
  identity?(options: O, baseDir: string): string;
  /**
   * Files the stage reads besides the records (protected texts, a tokenizer file), relative to
   * `baseDir` or absolute: `run` checks them before saying an earlier build is up to date.
   */
  reads?(options: O, baseDir: string): Promise<string[]>;
  /** Extra lines for `siftpack plan` (derived settings). */
  explain?(options: O): Record<string, unknown>;
}

/** The declared form of a stage with these options. */
export function formOf<O>(def: StageDefinition<O>, options: O): StageForm<O> {
  const f = def.form;
  if (f === undefined) return { kind: "whole" };
  return typeof f === "function" ? f(options) : f;
}

export function defineStage<O>(def: StageDefinition<O>): StageDefinition<O> {
  return def;
}
