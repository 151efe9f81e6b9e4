// The dedup stage's options: method exact, or method minhash with its own keys (rejected under exact).
import { bool, field, list, num, obj, str, type Issue, type Path, type Schema } from "../pipeline/schema.js";

export interface ExactOptions {
  method: "exact";
}

export interface MinhashOptions {
  method: "minhash";
  /** Jaccard similarity from which two documents are near-duplicates. */
  threshold: number;
  shingle: "word" | "char";
  /** Words or characters per shingle (default 5 words, 9 characters). */
  ngram: number;
  lowercase: boolean;
  /** Signature length k. */
  permutations: number;
  /** LSH bands; rows = ⌊permutations / bands⌋. Chosen from threshold and miss_weight when absent. */
  bands?: number;
  /** Weight of missed pairs against checked candidates when choosing bands (0..1). */
  miss_weight: number;
  /** How a candidate pair is confirmed: signature estimate or exact Jaccard of the shingle sets. */
  confirm: "signature" | "exact";
  keep: "first" | "longest" | "source-priority";
  /** Source names in priority order, for keep: source-priority. */
  sources?: string[];
  /** drop the near-duplicates, or keep them all and tag each cluster's records with `cluster`. */
  action: "drop" | "mark";
  memory_mb: number;
  /** Signing threads: 0 = one per core, 1 = the main thread, n = n worker threads. */
  workers: number;
}

export type DedupOptions = ExactOptions | MinhashOptions;

/** 9 characters span about one and a half English words: few chance matches between unrelated texts, while one changed word still leaves most shingles intact. */
export const DEFAULT_NGRAM = { word: 5, char: 9 } as const;

const minhashFields = {
  method: field(str({ oneOf: ["exact", "minhash"] }), { default: "exact" }),
  threshold: field(num({ min: 0, exclusiveMin: true, max: 1 }), { default: 0.8 }),
  shingle: field(str({ oneOf: ["word", "char"] }), { default: "word" }),
  ngram: field(num({ integer: true, min: 1, max: 64 })),
  lowercase: field(bool(), { default: true }),
  permutations: field(num({ integer: true, min: 16, max: 1024 }), { default: 128 }),
  bands: field(num({ integer: true, min: 1 })),
  miss_weight: field(num({ min: 0, exclusiveMin: true, max: 1 }), { default: 0.9 }),
  confirm: field(str({ oneOf: ["signature", "exact"] }), { default: "signature" }),
  keep: field(str({ oneOf: ["first", "longest", "source-priority"] }), { default: "first" }),
  sources: field(list(str({ nonEmpty: true }), { nonEmpty: true })),
  action: field(str({ oneOf: ["drop", "mark"] }), { default: "drop" }),
  memory_mb: field(num({ integer: true, min: 1 }), { default: 2048 }),
  workers: field(num({ integer: true, min: 0, max: 256 }), { default: 0 }),
};
const minhashSchema = obj(minhashFields);
const MINHASH_ONLY = Object.keys(minhashFields).filter((k) => k !== "method");

function isMapping(v: unknown): v is Record<string, unknown> {
  return v !== null && typeof v === "object" && !Array.isArray(v);
}

/**
 * One schema for both forms, since a pipeline may run `dedup` twice (exact, then minhash). Under
 * method exact (the default) every MinHash key is an error that says so; under minhash the defaults
 * are filled in, ngram by shingle kind, and the keys that depend on each other are checked.
 */
export const dedupOptions: Schema<DedupOptions> = {
  describe: "a mapping (method: exact | minhash, and for minhash its options)",
  check(value: unknown, path: Path, issues: Issue[]): DedupOptions {
    const before = issues.length;
    const o = minhashSchema.check(value, path, issues);
    if (o.method !== "minhash") {
      if (isMapping(value)) {
        for (const key of MINHASH_ONLY) {
          if (value[key] !== undefined)
            issues.push({ path: [...path, key], atKey: true, message: `"${key}" applies only to method: minhash (this dedup is method: exact)` });
        }
      }
      return { method: "exact" };
    }
    // Rebuilt in the fields' order so that `plan` lists ngram where it belongs once filled in.
    const filled = { ...o, ngram: o.ngram ?? DEFAULT_NGRAM[o.shingle as "word" | "char"] } as Record<string, unknown>;
    const m = Object.fromEntries(Object.keys(minhashFields).filter((k) => filled[k] !== undefined).map((k) => [k, filled[k]])) as unknown as MinhashOptions;
    if (issues.length > before) return m;
    if (m.bands !== undefined && m.bands > m.permutations)
      issues.push({ path: [...path, "bands"], message: `bands must be at most permutations (${m.permutations}), got ${m.bands}` });
    if (m.keep === "source-priority" && m.sources === undefined)
      issues.push({ path: [...path, "keep"], message: `keep: source-priority needs "sources", the source names in priority order` });
    if (m.keep !== "source-priority" && m.sources !== undefined)
      issues.push({ path: [...path, "sources"], atKey: true, message: `"sources" applies only to keep: source-priority (keep is ${m.keep})` });
    return m;
  },
};
