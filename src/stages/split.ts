// split: assigns each record to train or a held-out split from a seeded hash of its id, group field or near-duplicate cluster.
import { defineStage } from "./stage.js";
import { field, num, obj, refine, str, type Infer } from "../pipeline/schema.js";
import { loadHasher, unitHash } from "../lib/hash.js";
import type { DocRecord, StageContext } from "../types.js";

const fraction = num({ min: 0, max: 1 });
export const splitOptions = refine(
  obj({
    by: field(str({ nonEmpty: true })),
    holdout: field(obj({ val: field(fraction, { default: 0 }), test: field(fraction, { default: 0 }) }), {
      default: { val: 0.01, test: 0.01 },
    }),
    /** A held-out split with a non-zero fraction and fewer documents than this gets a warning (0: never). */
    min_docs: field(num({ integer: true, min: 0 }), { default: 0 }),
  }),
  (o, path, issues) => {
    if (o.holdout.val + o.holdout.test >= 1)
      issues.push({ path: [...path, "holdout"], message: `val + test must be below 1 so train gets records, got ${o.holdout.val + o.holdout.test}` });
  },
);
export type SplitOptions = Infer<typeof splitOptions>;

const HELD_OUT = ["val", "test"] as const;

/** What one instance saw: documents per split, each marked cluster's first split, clusters it saw in two splits. */
interface SplitSummary {
  documents: { train: number; val: number; test: number };
  clusters: [string, string][];
  straddling: string[];
}

/** The checks that need every record: clusters across splits, held-out splits below min_docs (warnings and counts). */
function checkSplits(summaries: SplitSummary[], o: SplitOptions, ctx: Pick<StageContext, "count" | "log">): void {
  const documents = { train: 0, val: 0, test: 0 };
  const clusterSplit = new Map<string, string>();
  const straddling = new Set<string>();
  for (const s of summaries) {
    for (const k of ["train", "val", "test"] as const) documents[k] += s.documents[k];
    for (const c of s.straddling) straddling.add(c);
    for (const [c, split] of s.clusters) {
      const first = clusterSplit.get(c);
      if (first === undefined) clusterSplit.set(c, split);
      else if (first !== split) straddling.add(c);
    }
  }
  if (straddling.size > 0) {
    ctx.count("split:clusters-across-splits", straddling.size);
    ctx.log.warn(
      { stage: "split", clusters: straddling.size, by: o.by, example: [...straddling][0] },
      "near-duplicate clusters span groups in different splits; their members were split by group (see siftpack overlap)",
    );
  }
  // Checked once the stream has ended: only then is a split's size known.
  let small = 0;
  for (const name of HELD_OUT) {
    if (o.holdout[name] > 0 && documents[name] < o.min_docs) {
      small++;
      ctx.log.warn({ stage: "split", split: name, documents: documents[name], min_docs: o.min_docs, fraction: o.holdout[name], by: o.by }, `held-out split "${name}" has fewer documents than min_docs`);
    }
  }
  if (small > 0) ctx.count("split:below-min-docs", small);
}

/** The key a record is split by: its group field's value, or (without one) its source and id. */
export function splitKey(r: DocRecord, by: string | undefined): string {
  const v = by === undefined ? undefined : r.meta[by];
  if (v === undefined || v === null || v === "") return `id\u0000${r.source}\u0000${r.id}`;
  return `group\u0000${by}\u0000${typeof v === "string" ? v : JSON.stringify(v)}`;
}

/**
 * The key a record is assigned by, group before cluster before id. A group is the user's explicit
 * promise ("no depot in two splits") and holds without exception. A near-duplicate cluster (marked,
 * not removed, by an earlier stage) keeps its members together when they have no group value, or
 * when `by` is not set. A cluster whose members carry different group values cannot satisfy both
 * in one streaming pass (the groups' splits are fixed before the cluster is complete); the stage
 * counts such clusters at the end (`split:clusters-across-splits`) and `siftpack overlap` shows
 * the near-duplicate pairs they leave across splits.
 */
export function assignmentKey(r: DocRecord, by: string | undefined): string {
  const key = splitKey(r, by);
  if (key.startsWith("group\u0000") || r.cluster === undefined) return key;
  return `cluster\u0000${r.cluster}`;
}

/**
 * Split of a key: one uniform draw per key, thresholds [val, val+test). A record's split depends
 * only on its own key and the seed, so adding or removing other records never moves it.
 */
export function assignSplit(key: string, seed: number, holdout: { val: number; test: number }): "train" | "val" | "test" {
  const u = unitHash(key, seed);
  if (u < holdout.val) return "val";
  if (u < holdout.val + holdout.test) return "test";
  return "train";
}

export default defineStage({
  name: "split",
  summary: "assigns train / val / test deterministically",
  // Not of form `record`: although each record's split depends on that record alone, the stage
  // counts documents per split, checks min_docs and tracks clusters across all records. Per unit
  // (in a build's task plan) each instance summarizes its unit and `gather` checks the whole.
  options: splitOptions,
  async create(o, env) {
    await loadHasher();
    return async function* split(input, ctx) {
      const documents = { train: 0, val: 0, test: 0 };
      // Split of each marked cluster's first member, and the clusters found in more than one split.
      const clusterSplit = new Map<string, string>();
      const straddling = new Set<string>();
      for await (const r of input) {
        const s = assignSplit(assignmentKey(r, o.by), ctx.seed, o.holdout);
        r.split = s;
        documents[s]++;
        if (r.cluster !== undefined) {
          const first = clusterSplit.get(r.cluster);
          if (first === undefined) clusterSplit.set(r.cluster, s);
          else if (first !== s) straddling.add(r.cluster);
        }
        yield r;
      }
      for (const [name, n] of Object.entries(documents)) ctx.count(`split:${name}`, n);
      const summary: SplitSummary = { documents, clusters: [...clusterSplit], straddling: [...straddling] };
      if (env?.perFile && ctx.summarize) ctx.summarize(summary);
      else checkSplits([summary], o, ctx);
    };
  },
  form: {
    kind: "unit",
    gather(summaries, o, ctx) {
      checkSplits(summaries as SplitSummary[], o, ctx);
    },
  },
  explain(o) {
    return { key: o.by === undefined ? "near-duplicate cluster when marked, else source and id" : `meta field "${o.by}"; without it, near-duplicate cluster when marked, else source and id` };
  },
});
