// Exact duplicates as a keyed step: every record emits the XXH64 of its text into the partition of
// that hash (its low 32 bits modulo the partitions); a partition step keeps the first record of
// every text in input order (units in build order, rows in order) and drops the others naming it.
// Equal texts share a hash and so a partition.
import { hex64, loadHasher, xxh64String } from "../lib/hash.js";
import { jsonLineCollectors, type KeyedForm } from "../stages/keyed.js";

const FILE = "exact.jsonl";

export const exactForm: KeyedForm<unknown> = {
  kind: "keyed",
  steps: { partition: "exact-dups" },
  collectors: jsonLineCollectors(
    FILE,
    (r) => {
      const h = hex64(xxh64String(r.text));
      return { hash: parseInt(h.slice(-8), 16), line: { i: r.seq, h, id: r.id } };
    },
    loadHasher,
  ),
  async partition(_o, p, files, out, ctx) {
    // One entry per distinct text of the partition: the id of its first record.
    const first = new Map<string, string>();
    let duplicates = 0;
    for (let u = 0; u < files.units; u++) {
      for await (const line of files.lines(FILE, u, p)) {
        const e = JSON.parse(line) as { i: number; h: string; id: string };
        const of = first.get(e.h);
        if (of === undefined) first.set(e.h, e.id);
        else {
          out.decide(u, e.i, { of, xxh64: e.h });
          duplicates++;
        }
      }
    }
    ctx.log.debug({ partition: p, texts: first.size, duplicates }, "exact duplicates chosen");
  },
  async applier() {
    return (r, d, ctx) => {
      if (d === undefined) return r;
      ctx.drop(r, "duplicate", d as Record<string, unknown>);
      return undefined;
    };
  },
};
