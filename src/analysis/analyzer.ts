// Analyzers see every kept record after packing decisions and add figures to the manifest.
import type { DocRecord, Logger } from "../types.js";
import type { PipelineConfig } from "../pipeline/config.js";
import { overlapAnalyzer } from "./overlap.js";
import { tokenStatsAnalyzer } from "./token-stats.js";

export interface AnalyzerContext {
  config: PipelineConfig;
  /** The build directory in progress. */
  workDir: string;
  /** The pipeline file's directory (relative paths in stage options). */
  baseDir: string;
  /** Threads the run may use. */
  workers: number;
  log: Logger;
}

export interface Analyzer {
  /** Called for every kept record, in output order, with `split` and `tokens` set. */
  add(record: DocRecord): void | Promise<void>;
  /** Figures to merge into manifest.json under `key`. */
  finish(): Promise<unknown>;
  /** Releases threads and temporary files; called after finish, and instead of it when the build fails. */
  close?(): Promise<void>;
}

export interface AnalyzerFactory {
  /** The manifest key the figures go under. */
  key: string;
  create(ctx: AnalyzerContext): Analyzer | undefined | Promise<Analyzer | undefined>;
}

/** Analyzers run on every build; each decides from the configuration whether it applies. */
export const ANALYZERS: AnalyzerFactory[] = [tokenStatsAnalyzer, overlapAnalyzer];
