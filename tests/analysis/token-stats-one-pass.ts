// The one-pass definition of the token statistics (every kept record through one instance): the
// reference the build's step-wise token statistics (src/analysis/token-stats-steps.ts) are checked against.
import type { DocRecord } from "../../src/types.js";
import { uint32s } from "../../src/lib/grow.js";
import type { GroupStats } from "../../src/analysis/token-stats-steps.js";

// The shape now lives beside the step-wise statistics; re-exported for existing importers.

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

export const tokenStatsAnalyzer = {
  key: "token_stats",
  create(_ctx?: unknown) {
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
