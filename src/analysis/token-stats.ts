// Token statistics per split and per source: documents, tokens, target tokens, text bytes, bytes
// per token and length percentiles, under "token_stats" in manifest.json.
import type { AnalyzerFactory } from "./analyzer.js";
import type { DocRecord } from "../types.js";
import { uint32s } from "../lib/grow.js";

export interface GroupStats {
  documents: number;
  tokens: number;
  /** Tokens whose prediction counts in the loss if the document is not cut: all but the first. */
  target_tokens: number;
  bytes: number;
  bytes_per_token: number;
  mean_tokens: number;
  /** Document length in tokens at these percentiles (nearest rank). */
  percentiles: { p50: number; p90: number; p99: number; max: number };
}

/** Lengths of one group, in a growable typed array (4 bytes a document). */
class Lengths {
  private readonly a = uint32s();
  tokens = 0;
  bytes = 0;
  get n(): number {
    return this.a.length;
  }
  push(len: number, bytes: number): void {
    this.a.push(len);
    this.tokens += len;
    this.bytes += bytes;
  }
  stats(): GroupStats {
    const sorted = this.a.view().slice().sort();
    const rank = (p: number) => (this.n === 0 ? 0 : sorted[Math.min(this.n - 1, Math.ceil(p * this.n) - 1)]);
    return {
      documents: this.n,
      tokens: this.tokens,
      target_tokens: this.tokens - this.n,
      bytes: this.bytes,
      bytes_per_token: this.tokens ? this.bytes / this.tokens : 0,
      mean_tokens: this.n ? this.tokens / this.n : 0,
      percentiles: { p50: rank(0.5), p90: rank(0.9), p99: rank(0.99), max: this.n ? sorted[this.n - 1] : 0 },
    };
  }
}

export const tokenStatsAnalyzer: AnalyzerFactory = {
  key: "token_stats",
  create() {
    const groups = new Map<string, Map<string, Lengths>>();
    const get = (split: string, source: string) => {
      let bySource = groups.get(split);
      if (!bySource) groups.set(split, (bySource = new Map()));
      let l = bySource.get(source);
      if (!l) bySource.set(source, (l = new Lengths()));
      return l;
    };
    return {
      add(r: DocRecord) {
        const n = r.tokens?.length ?? 0;
        const bytes = Buffer.byteLength(r.text);
        get(r.split ?? "train", r.source).push(n, bytes);
        get(r.split ?? "train", "*").push(n, bytes);
      },
      async finish() {
        const out: Record<string, { all: GroupStats; by_source: Record<string, GroupStats> }> = {};
        const order = (s: string) => (["train", "val", "test"].indexOf(s) + 4) % 4;
        for (const split of [...groups.keys()].sort((a, b) => order(a) - order(b) || (a < b ? -1 : 1))) {
          const bySource = groups.get(split)!;
          out[split] = {
            all: bySource.get("*")!.stats(),
            by_source: Object.fromEntries([...bySource.entries()].filter(([k]) => k !== "*").sort(([a], [b]) => (a < b ? -1 : 1)).map(([k, l]) => [k, l.stats()])),
          };
        }
        return out;
      },
    };
  },
};
