// The encodings siftpack knows: where their ranks come from, their pre-tokenizer pattern and scanner.

import type { Scanner } from "./scan-common.js";
import { scanCl100k } from "./scan-cl100k.js";
import { scanGpt2 } from "./scan-gpt2.js";
import { scanO200k } from "./scan-o200k.js";

export interface EncodingSpec {
  name: string;
  /** Module specifier of the js-tiktoken rank file. */
  ranksModule: string;
  /**
   * The pre-tokenizer pattern as the reference defines it. js-tiktoken's rank files spell the
   * case-insensitive contraction group of cl100k/o200k out as 's|'S|..., which misses the long s
   * (U+017F) that a case-insensitive match accepts, so the patterns are kept here instead.
   */
  pattern: string;
  scanner: Scanner;
}

const CONTRACTIONS = "(?i:'s|'t|'re|'ve|'m|'ll|'d)";

export const GPT2_PATTERN = String.raw`'s|'t|'re|'ve|'m|'ll|'d| ?\p{L}+| ?\p{N}+| ?[^\s\p{L}\p{N}]+|\s+(?!\S)|\s+`;

export const CL100K_PATTERN =
  CONTRACTIONS + String.raw`|[^\r\n\p{L}\p{N}]?\p{L}+|\p{N}{1,3}| ?[^\s\p{L}\p{N}]+[\r\n]*|\s*[\r\n]+|\s+(?!\S)|\s+`;

export const O200K_PATTERN = [
  String.raw`[^\r\n\p{L}\p{N}]?[\p{Lu}\p{Lt}\p{Lm}\p{Lo}\p{M}]*[\p{Ll}\p{Lm}\p{Lo}\p{M}]+` + CONTRACTIONS + "?",
  String.raw`[^\r\n\p{L}\p{N}]?[\p{Lu}\p{Lt}\p{Lm}\p{Lo}\p{M}]+[\p{Ll}\p{Lm}\p{Lo}\p{M}]*` + CONTRACTIONS + "?",
  String.raw`\p{N}{1,3}`,
  String.raw` ?[^\s\p{L}\p{N}]+[\r\n/]*`,
  String.raw`\s*[\r\n]+`,
  String.raw`\s+(?!\S)`,
  String.raw`\s+`,
].join("|");

export const ENCODING_SPECS: readonly EncodingSpec[] = [
  { name: "gpt2", ranksModule: "js-tiktoken/ranks/gpt2", pattern: GPT2_PATTERN, scanner: scanGpt2 },
  { name: "r50k_base", ranksModule: "js-tiktoken/ranks/r50k_base", pattern: GPT2_PATTERN, scanner: scanGpt2 },
  { name: "p50k_base", ranksModule: "js-tiktoken/ranks/p50k_base", pattern: GPT2_PATTERN, scanner: scanGpt2 },
  { name: "cl100k_base", ranksModule: "js-tiktoken/ranks/cl100k_base", pattern: CL100K_PATTERN, scanner: scanCl100k },
  { name: "o200k_base", ranksModule: "js-tiktoken/ranks/o200k_base", pattern: O200K_PATTERN, scanner: scanO200k },
];
