// Test helper: packs documents with the real factory and collects the rows as plain arrays.
import { createPacker, packOptions, type PackOptions, type PackStats } from "../../src/stages/pack.js";
import type { Issue } from "../../src/pipeline/schema.js";

export interface Row {
  tokens: number[];
  segments: number[];
}

/** Resolves pack options through the real schema (defaults filled in); throws on any issue. */
export function options(given: Record<string, unknown>): PackOptions {
  const issues: Issue[] = [];
  const o = packOptions.check(given, ["pack"], issues);
  if (issues.length > 0) throw new Error(issues.map((i) => `${i.path.join(".")}: ${i.message}`).join("; "));
  return o;
}

export function packAll(o: PackOptions, docs: readonly (readonly number[])[], ctx = { seed: 7, split: "train" }, pad = 0): { rows: Row[]; stats: PackStats } {
  const rows: Row[] = [];
  const p = createPacker(o, pad, (t, s) => rows.push({ tokens: [...t], segments: [...s] }), ctx);
  for (const d of docs) p.add(Uint32Array.from(d));
  p.finish();
  return { rows, stats: p.stats };
}
