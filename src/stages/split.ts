// split: assigns each record to train or a held-out split from a seeded hash of its id or group field.
import { defineStage } from "./stage.js";
import { field, num, obj, refine, str, type Infer } from "../pipeline/schema.js";
import { loadHasher, unitHash } from "../lib/hash.js";
import type { DocRecord } from "../types.js";

const fraction = num({ min: 0, max: 1 });
export const splitOptions = refine(
  obj({
    by: field(str({ nonEmpty: true })),
    holdout: field(obj({ val: field(fraction, { default: 0 }), test: field(fraction, { default: 0 }) }), {
      default: { val: 0.01, test: 0.01 },
    }),
  }),
  (o, path, issues) => {
    if (o.holdout.val + o.holdout.test >= 1)
      issues.push({ path: [...path, "holdout"], message: `val + test must be below 1 so train gets records, got ${o.holdout.val + o.holdout.test}` });
  },
);
export type SplitOptions = Infer<typeof splitOptions>;

/** The key a record is split by: its group field's value, or (without one) its source and id. */
export function splitKey(r: DocRecord, by: string | undefined): string {
  const v = by === undefined ? undefined : r.meta[by];
  if (v === undefined || v === null || v === "") return `id\u0000${r.source}\u0000${r.id}`;
  return `group\u0000${by}\u0000${typeof v === "string" ? v : JSON.stringify(v)}`;
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
  perRecord: true,
  keepsText: true,
  options: splitOptions,
  async create(o) {
    await loadHasher();
    return async function* split(input, ctx) {
      for await (const r of input) {
        // A near-duplicate cluster, when marked, is kept together by splitting on the cluster id.
        const key = r.cluster !== undefined ? `cluster\u0000${r.cluster}` : splitKey(r, o.by);
        r.split = assignSplit(key, ctx.seed, o.holdout);
        yield r;
      }
    };
  },
});
