// The library: run a pipeline from code, or use and extend the stages.
export { loadPipeline, parsePipeline, type LoadedPipeline } from "./pipeline/load.js";
export { runPipeline, type RunOptions, type RunResult } from "./engine/run.js";
export type { BuildProgress, PhaseProgress, PhaseTiming } from "./engine/progress.js";
export type { PipelineConfig, SourceConfig } from "./pipeline/config.js";
export { STAGES, defineStage, type Stage, type StageDefinition } from "./stages/index.js";
export { keyedStage, type KeyedForm } from "./stages/keyed.js";
export { normalizeText, type NormalizeOptions } from "./stages/normalize.js";
export { filterReason, countWords, type FilterOptions } from "./stages/filter.js";
export { assignSplit, splitKey } from "./stages/split.js";
export { ConcatPacker } from "./stages/pack.js";
export { ENCODINGS, loadEncoding, type Encoder } from "./tokenizer/index.js";
export { readManifest, verifyOutput, type Manifest } from "./output/manifest.js";
export { npyHeader, parseNpyHeader } from "./output/npy.js";
export { positionsOf, targetMaskOf, cuSeqlensOf } from "./output/shard-writer.js";
export * as schema from "./pipeline/schema.js";
export { SiftpackError, ERROR_CODES, type ErrorCode } from "./errors.js";
export type { DocRecord, StageContext, Logger, Origin, Turn } from "./types.js";
export { mapTurnTexts, turnTexts } from "./chat/turns.js";
