// The figures `stats --json` prints and the report embeds: one function, so both read the manifest the same way.
import type { Manifest } from "../output/manifest.js";

/**
 * Per split the manifest's counts (shards as a count), with padding_fraction derived from the
 * counts for manifests written before it existed; record counts and token statistics as stored.
 */
export function statsFigures(m: Manifest) {
  const splits = Object.fromEntries(
    Object.entries(m.splits).map(([k, s]) => [k, { ...s, shards: s.shards.length, padding_fraction: s.padding_fraction ?? (s.blocks ? s.padding_tokens / (s.blocks * m.length) : 0) }]),
  );
  return { length: m.length, strategy: m.strategy, tokenizer: m.tokenizer.name, splits, records: m.records, token_stats: m.token_stats, ...(m.mixture ? { mixture: m.mixture } : {}) };
}

export type StatsFigures = ReturnType<typeof statsFigures>;
