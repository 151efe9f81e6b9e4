// The stage registry: every stage the pipeline file may name.
import normalize from "./normalize.js";
import filter from "./filter.js";
import redact from "./redact.js";
import language from "./language.js";
import stripRepeatedLines from "./strip-repeated-lines.js";
import dedup from "./dedup.js";
import split from "./split.js";
import tokenize from "./tokenize.js";
import pack from "./pack.js";
import decontaminate from "./decontaminate.js";
import type { StageDefinition } from "./stage.js";

export const STAGES: Record<string, StageDefinition> = { normalize, filter, redact, language, strip_repeated_lines: stripRepeatedLines, dedup, split, decontaminate, tokenize, pack };

/** The stages siftpack ships (a worker thread can rebuild these; stages registered at run time it cannot). */
export const BUILTIN_STAGES: ReadonlySet<string> = new Set(Object.keys(STAGES));

export type { Stage, StageDefinition, StageEnv, GatherContext } from "./stage.js";
export { defineStage } from "./stage.js";
