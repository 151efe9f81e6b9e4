// What the overlap figures take from the pipeline file: whether they apply, n, the MinHash settings and
// the tokenizer's vocabulary size. Shared by the one-pass analyzer (overlap.ts) and the steps (overlap-steps.ts).
import type { PipelineConfig } from "../pipeline/config.js";
import { tokenizeBounds } from "../stages/tokenize.js";
import { dedupOptions, type MinhashOptions } from "../dedup/options.js";
import { resolveBands } from "../dedup/lsh-params.js";
import type { NearDupSettings } from "../overlap/figures.js";

/**
 * Word n-gram length of the overlap figures by default: 13, as in the contamination analysis of
 * Brown et al. 2020 ("Language Models are Few-Shot Learners", appendix C; from memory). The
 * pipeline file's `overlap: { ngram }` changes it.
 */
export const OVERLAP_NGRAM = 13;

/** Without a held-out split there is nothing to compare: the (costly) n-gram and MinHash work is skipped. */
export function overlapApplies(config: PipelineConfig): boolean {
  const split = config.stages.find((s) => s.name === "split");
  return config.overlap.enabled && !!split && split.options.holdout.val + split.options.holdout.test > 0;
}

/** MinHash settings: the pipeline's last MinHash dedup stage, or that stage's defaults when it has none. */
export function nearDupSettings(config: PipelineConfig): NearDupSettings {
  const stage = config.stages.filter((s) => s.name === "dedup" && s.options.method === "minhash").at(-1);
  const issues: { path: (string | number)[]; message: string }[] = [];
  const o = (stage?.options ?? dedupOptions.check({ method: "minhash" }, [], issues)) as MinhashOptions;
  if (issues.length) throw new Error(`overlap: default MinHash options do not validate: ${issues[0].message}`);
  const { bands, rows } = resolveBands(o);
  return {
    signer: { shingle: { kind: o.shingle, ngram: o.ngram, lowercase: o.lowercase }, permutations: o.permutations, bands, rows, seed: config.seed },
    threshold: o.threshold,
    basis: stage ? "the pipeline's minhash dedup stage" : "dedup minhash defaults (the pipeline has no minhash dedup stage)",
  };
}

/** The MinHash settings, or why near-duplicates are not counted. */
export function nearDupOf(config: PipelineConfig): NearDupSettings | { unavailable: string } {
  return config.overlap.near_duplicates ? nearDupSettings(config) : { unavailable: "switched off in the pipeline file (overlap: { near_duplicates: false })" };
}

/** V of the add-one unigram model: the tokenizer's vocabulary size (0 without a tokenize stage). */
export function vocabSizeOf(config: PipelineConfig, baseDir: string): number {
  const tokenize = config.stages.find((s) => s.name === "tokenize");
  return tokenize ? tokenizeBounds(tokenize.options, baseDir).vocabSize : 0;
}
