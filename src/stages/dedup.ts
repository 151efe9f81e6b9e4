// dedup: removes exact duplicates by the XXH64 of the (already normalized) text, keeping the first in input order.
import { defineStage } from "./stage.js";
import { field, obj, str, type Infer } from "../pipeline/schema.js";
import { hex64, loadHasher, xxh64String } from "../lib/hash.js";

export const dedupOptions = obj({
  method: field(str({ oneOf: ["exact"] }), { default: "exact" }),
});
export type DedupOptions = Infer<typeof dedupOptions>;

export default defineStage({
  name: "dedup",
  summary: "removes duplicate documents, keeping the first",
  keepsText: true,
  options: dedupOptions,
  async create() {
    await loadHasher();
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
  },
});
