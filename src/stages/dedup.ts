// dedup: removes exact duplicates (XXH64 of the text, keeping the first) or near-duplicates (MinHash + LSH, two passes).
import { defineStage, type Stage } from "./stage.js";
import { hex64, loadHasher, xxh64String } from "../lib/hash.js";
import { dedupOptions, type DedupOptions } from "../dedup/options.js";
import { createMinhashStage } from "../dedup/minhash-stage.js";
import { explainBands } from "../dedup/lsh-params.js";

export { dedupOptions, type DedupOptions, type MinhashOptions } from "../dedup/options.js";

function exactStage(): Stage {
  return async function* dedupExact(input, ctx) {
    // One 64-bit fingerprint per kept text. At 10M documents this Map is ~1 GB; a packed
    // open-addressing table is the planned replacement when the corpus outgrows it.
    const firstId = new Map<bigint, string>();
    for await (const r of input) {
      const h = xxh64String(r.text);
      const first = firstId.get(h);
      if (first !== undefined) ctx.drop(r, "duplicate", { of: first, xxh64: hex64(h) });
      else {
        firstId.set(h, r.id);
        yield r;
      }
    }
  };
}

export default defineStage<DedupOptions>({
  name: "dedup",
  summary: "removes duplicate documents: exact (same text, keeps the first) or minhash (near-duplicates; two passes over the corpus)",
  options: dedupOptions,
  async create(o, env) {
    // workers: 0 follows the run's --workers (one thread there means signing in the main thread).
    if (o.method === "minhash") return createMinhashStage(o.workers === 0 && env?.workers !== undefined ? { ...o, workers: env.workers } : o);
    await loadHasher();
    return exactStage();
  },
  explain(o) {
    return o.method === "minhash" ? explainBands(o) : {};
  },
});
