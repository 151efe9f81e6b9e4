// The figures a build adds to manifest.json, computed in steps so that no task reads the whole
// corpus: each packing group's kept records go to a collector (in the pack phase, next to packing),
// partition steps join what the groups collected per partition of keys, and `figures` reads the
// partitions' shared results (small) in the assemble phase. The files and steps are those of a
// keyed stage (src/stages/keyed.ts), with packing groups in the place of units.
import type { PipelineConfig } from "../pipeline/config.js";
import type { Collectors, KeyedEnv, KeyedFiles, StepContext, StepOutput } from "../stages/keyed.js";

export interface AnalysisContext {
  config: PipelineConfig;
  /** The pipeline file's directory (relative paths in stage options). */
  baseDir: string;
}

export interface AnalysisSteps {
  /** The manifest key the figures go under. */
  key: string;
  /**
   * Whether the collectors read the records' text: as a string (true), only as its UTF-8 bytes
   * ("utf8": `utf8` set, `text` ""), or not at all (false: "" with `textBytes` set). The pack phase
   * decodes no more than the analyses ask.
   */
  usesText: boolean | "utf8";
  /** Whether the analysis applies to this build (e.g. the overlap figures need a held-out split). */
  applies(ctx: AnalysisContext): boolean;
  /**
   * Per packing group, made once per task: `unit(g, out)` gets a collector for group g, whose
   * `add` receives every kept record of the group once (repeats by weight not repeated), in the
   * group's output order, with `split` and `tokens` set.
   */
  collectors(ctx: AnalysisContext, env: KeyedEnv): Promise<Collectors>;
  /** Per partition of keys (any may be empty). */
  partition(ctx: AnalysisContext, p: number, files: KeyedFiles, out: StepOutput, step: StepContext): Promise<void>;
  /** Once, from what the partitions shared (and the groups' own files): the figures. */
  figures(ctx: AnalysisContext, files: KeyedFiles, step: StepContext): Promise<unknown>;
}
