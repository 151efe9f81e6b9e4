// The overlap analyzer: figures between splits (n-gram overlap, exact and near duplicates, unigram shift) under "overlap" in manifest.json.
import { mkdtempSync, rmSync } from "node:fs";
import { join } from "node:path";
import type { AnalyzerFactory } from "./analyzer.js";
import type { PipelineConfig } from "../pipeline/config.js";
import { loadHasher } from "../lib/hash.js";
import { tokenizeBounds } from "../stages/tokenize.js";
import { OverlapRunner } from "./overlap-runner.js";
import { dedupOptions, type MinhashOptions } from "../dedup/options.js";
import { resolveBands } from "../dedup/lsh-params.js";
import type { NearDupSettings } from "../overlap/split-overlap.js";

/**
 * Word n-gram length of the overlap figures by default: 13, as in the contamination analysis of
 * Brown et al. 2020 ("Language Models are Few-Shot Learners", appendix C; from memory). The
 * pipeline file's `overlap: { ngram }` changes it.
 */
export const OVERLAP_NGRAM = 13;

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

export const overlapAnalyzer: AnalyzerFactory = {
  key: "overlap",
  async create({ config, workDir, baseDir, workers, log }) {
    // Without a held-out split there is nothing to compare: skip the (costly) n-gram and MinHash work.
    const split = config.stages.find((s) => s.name === "split");
    if (!config.overlap.enabled || !split || split.options.holdout.val + split.options.holdout.test === 0) return undefined;
    await loadHasher();
    const tokenize = config.stages.find((s) => s.name === "tokenize");
    const vocabSize = tokenize ? tokenizeBounds(tokenize.options, baseDir).vocabSize : 0;
    const tmpDir = mkdtempSync(join(workDir, ".overlap-"));
    const nearDup = config.overlap.near_duplicates ? nearDupSettings(config) : { unavailable: "switched off in the pipeline file (overlap: { near_duplicates: false })" };
    const counter = new OverlapRunner({ ngram: config.overlap.ngram, form: "NFKC", vocabSize, nearDup, tmpDir }, workers);
    return {
      add(r) {
        return counter.add(r.split ?? "train", r.text, r.tokens);
      },
      async finish() {
        try {
          const figures = await counter.finish();
          if (figures.train_set.kind === "bloom") log.info({ analyzer: "overlap", train_set: figures.train_set }, "train n-grams exceeded the exact set; overlap with train uses a Bloom filter");
          return figures;
        } finally {
          rmSync(tmpDir, { recursive: true, force: true });
        }
      },
      async close() {
        await counter.close();
        rmSync(tmpDir, { recursive: true, force: true });
      },
    };
  },
};
