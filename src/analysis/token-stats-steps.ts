// Token statistics per split and per source ("token_stats" in manifest.json) as analysis steps: each
// packing group's collector writes its counts and a histogram of document lengths, and `figures`
// merges the groups' histograms. The figures are those of the one-pass analyzer (token-stats.ts).
//
// Why a histogram rather than every length: nearest-rank percentiles need only how many documents
// have each length, and the number of distinct lengths is bounded by the longest document, not by
// the number of documents. So a group's file and the merge stay small however large the corpus is.
//
// Files of one group (own): lengths.json, one entry per (split, source) seen (and per (split, "*"),
// all sources) with {split, source, documents, tokens, bytes, at, n}; lengths.bin, Float64 pairs
// (length, documents) sorted by length, entry e's n pairs starting at pair `at`. Float64 because a
// group's counts may pass 2^32 in principle, and doubles hold integers exactly up to 2^53.
import type { AnalysisSteps } from "./steps.js";
import type { DocRecord } from "../types.js";
import { turnSpans } from "../chat/layout.js";

export interface GroupStats {
  documents: number;
  tokens: number;
  /** Tokens whose prediction counts in the loss if the document is not cut: all but the first (of a conversation, its trained tokens but the first). */
  target_tokens: number;
  bytes: number;
  bytes_per_token: number;
  mean_tokens: number;
  /** Document length in tokens at these percentiles (nearest rank). */
  percentiles: { p50: number; p90: number; p99: number; max: number };
}

/** Counts of one (split, source) in one group or, after the merge, in all of them. */
class Tally {
  documents = 0;
  tokens = 0;
  bytes = 0;
  /** Tokens of conversations outside their trained roles (besides each document's first token): not targets. */
  untrained = 0;
  /** Document length in tokens → documents of that length. */
  readonly hist = new Map<number, number>();

  add(len: number, bytes: number, untrained = 0): void {
    this.untrained += untrained;
    this.documents++;
    this.tokens += len;
    this.bytes += bytes;
    this.hist.set(len, (this.hist.get(len) ?? 0) + 1);
  }

  stats(): GroupStats {
    const n = this.documents;
    const lengths = [...this.hist.keys()].sort((a, b) => a - b);
    // The length at 0-based rank i among all n documents sorted by length: walk the histogram.
    const at = (i: number) => {
      let seen = 0;
      for (const len of lengths) {
        seen += this.hist.get(len)!;
        if (seen > i) return len;
      }
      return 0;
    };
    const rank = (p: number) => (n === 0 ? 0 : at(Math.min(n - 1, Math.ceil(p * n) - 1)));
    return {
      documents: n,
      tokens: this.tokens,
      target_tokens: this.tokens - n - this.untrained,
      bytes: this.bytes,
      bytes_per_token: this.tokens ? this.bytes / this.tokens : 0,
      mean_tokens: n ? this.tokens / n : 0,
      percentiles: { p50: rank(0.5), p90: rank(0.9), p99: rank(0.99), max: n ? lengths[lengths.length - 1] : 0 },
    };
  }
}

/** Tallies by split, then by source ("*": every source of the split). */
class Tallies {
  readonly bySplit = new Map<string, Map<string, Tally>>();
  get(split: string, source: string): Tally {
    let bySource = this.bySplit.get(split);
    if (!bySource) this.bySplit.set(split, (bySource = new Map()));
    let t = bySource.get(source);
    if (!t) bySource.set(source, (t = new Tally()));
    return t;
  }
}

interface Entry {
  split: string;
  source: string;
  documents: number;
  tokens: number;
  bytes: number;
  at: number;
  n: number;
  /** Present only when not 0 (conversations), so other builds' files do not change. */
  untrained?: number;
}

/** A conversation's targets when it is not cut: its trained tokens, less its first token if that is one. */
function trainedTargets(layout: Uint32Array): number {
  const spans = turnSpans(layout);
  let n = 0;
  for (const t of spans) n += t.end - t.learn;
  return spans.some((t) => t.learn === 0 && t.end > 0) ? n - 1 : n;
}

/** Train, val, test first, then other split names by name: the order of the one-pass analyzer. */
function order(s: string): number {
  return (["train", "val", "test"].indexOf(s) + 4) % 4;
}

export const tokenStatsSteps: AnalysisSteps = {
  key: "token_stats",
  usesText: false,
  applies: () => true,

  async collectors() {
    return {
      async unit(_g, out) {
        const t = new Tallies();
        return {
          add(r: DocRecord) {
            const n = r.tokens?.length ?? 0;
            const bytes = r.textBytes ?? Buffer.byteLength(r.text);
            const split = r.split ?? "train";
            const untrained = r.chat && n > 0 ? n - 1 - trainedTargets(r.chat) : 0;
            t.get(split, r.source).add(n, bytes, untrained);
            t.get(split, "*").add(n, bytes, untrained);
          },
          async finish() {
            const entries: Entry[] = [];
            const pairs: number[] = [];
            for (const [split, bySource] of t.bySplit)
              for (const [source, tally] of bySource) {
                const lengths = [...tally.hist.keys()].sort((a, b) => a - b);
                entries.push({ split, source, documents: tally.documents, tokens: tally.tokens, bytes: tally.bytes, at: pairs.length / 2, n: lengths.length, ...(tally.untrained ? { untrained: tally.untrained } : {}) });
                for (const len of lengths) pairs.push(len, tally.hist.get(len)!);
              }
            // A group without records writes nothing: its files read as empty.
            if (entries.length === 0) return;
            await out.own("lengths.bin").write(new Uint8Array(Float64Array.from(pairs).buffer));
            await out.own("lengths.json").write(JSON.stringify(entries));
          },
        };
      },
      async close() {},
    };
  },

  async partition() {
    // Nothing is keyed: the groups' histograms are small and merged by `figures`.
  },

  async figures(_ctx, files) {
    const all = new Tallies();
    for (let g = 0; g < files.units; g++) {
      const head = (await files.read("lengths.json", g)).toString("utf8");
      if (!head) continue;
      const raw = await files.read("lengths.bin", g);
      // Copied into an aligned buffer: a Buffer from readFile may start at any byte offset.
      const pairs = new Float64Array(new Uint8Array(raw).buffer);
      for (const e of JSON.parse(head) as Entry[]) {
        const t = all.get(e.split, e.source);
        t.documents += e.documents;
        t.tokens += e.tokens;
        t.bytes += e.bytes;
        t.untrained += e.untrained ?? 0;
        for (let i = e.at; i < e.at + e.n; i++) t.hist.set(pairs[2 * i], (t.hist.get(pairs[2 * i]) ?? 0) + pairs[2 * i + 1]);
      }
    }
    const out: Record<string, { all: GroupStats; by_source: Record<string, GroupStats> }> = {};
    for (const split of [...all.bySplit.keys()].sort((a, b) => order(a) - order(b) || (a < b ? -1 : 1))) {
      const bySource = all.bySplit.get(split)!;
      out[split] = {
        all: bySource.get("*")!.stats(),
        by_source: Object.fromEntries([...bySource.entries()].filter(([k]) => k !== "*").sort(([a], [b]) => (a < b ? -1 : 1)).map(([k, t]) => [k, t.stats()])),
      };
    }
    return out;
  },
};
