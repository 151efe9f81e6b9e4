// The stage registry: every stage the pipeline file may name.
import normalize from "./normalize.js";
import filter from "./filter.js";
import dedup from "./dedup.js";
import split from "./split.js";
import tokenize from "./tokenize.js";
import pack from "./pack.js";
import type { StageDefinition } from "./stage.js";

export const STAGES: Record<string, StageDefinition> = { normalize, filter, dedup, split, tokenize, pack };

export type { Stage, StageDefinition, StageEnv } from "./stage.js";
export { defineStage } from "./stage.js";
