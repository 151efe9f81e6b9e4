// Explicit ids must be unique across a source's units (each unit checks its own rows while it is
// read): an engine-internal keyed step. The read phase collects (source, id) of the records and
// drops of such sources into the partition of the id's hash; the `ids` phase keeps the first unit
// of every id in build order; the pack phase quarantines the later ones.
import { jsonLineCollectors, type KeyedForm } from "../stages/keyed.js";
import { loadHasher, xxh64String } from "../lib/hash.js";
import type { Unit } from "./unit-io.js";

/** Sources with explicit ids read as more than one unit: only their ids can repeat across units. */
export function sourcesToCheck(units: Unit[]): Set<string> {
  const n = new Map<string, number>();
  for (const u of units) if (u.source.id !== undefined) n.set(u.source.name, (n.get(u.source.name) ?? 0) + 1);
  return new Set([...n].filter(([, k]) => k > 1).map(([s]) => s));
}

const FILE = "ids.jsonl";

/** Options: none. Rows in the collected lines are the unit's own (`i`, before the file-wide numbering). */
export const uniqueIdsForm: KeyedForm<unknown> = {
  kind: "keyed",
  steps: { partition: "ids" },
  collectors: jsonLineCollectors(
    FILE,
    (r) => {
      const k = `${r.source}\u0000${r.id}`;
      return { hash: Number(xxh64String(k) & 0xffffffffn), line: { i: r.seq, k } };
    },
    loadHasher,
  ),
  async partition(_o, p, files, out) {
    const first = new Map<string, number>();
    for (let u = 0; u < files.units; u++) {
      for await (const line of files.lines(FILE, u, p)) {
        const { i, k } = JSON.parse(line) as { i: number; k: string };
        const at = first.get(k);
        if (at === undefined) first.set(k, u);
        // The decision names the unit holding the first: the pack phase words the quarantine by whether it is the same file.
        else if (at !== u) out.decide(u, i, at);
      }
    }
  },
  // Applied by the pack phase itself (a repeated id is quarantined, which no stage can do).
  async applier() {
    return (r) => r;
  },
};
