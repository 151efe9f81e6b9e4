// Test helpers for the dedup stage: resolve options, run the stage over records with a recording context.
import { mkdtempSync, readdirSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import type { Issue } from "../../src/pipeline/schema.js";
import type { DocRecord, StageContext } from "../../src/types.js";

export interface Drop {
  record: DocRecord;
  reason: string;
  detail?: Record<string, unknown>;
}

export interface StageRun {
  kept: DocRecord[];
  drops: Drop[];
  workDir: string;
  files: string[];
  /** Lines of clusters.jsonl, parsed (empty when the stage wrote none). */
  clusters: any[];
  /** What the stage logged at info level, and at debug level. */
  logged: any[];
  debugged: any[];
  /** The stage's named counters (ctx.count). */
  counts: Record<string, number>;
}

/** Anything exposing the stage definition's surface (the src module, or the compiled one from dist/). */
export interface DedupDefinition {
  options: { check(v: unknown, path: (string | number)[], issues: Issue[]): any };
  create(o: any): any;
}

export function resolve(def: DedupDefinition, raw: unknown): any {
  const issues: Issue[] = [];
  const o = def.options.check(raw, [], issues);
  if (issues.length) throw new Error(issues.map((i) => `${i.path.join(".")}: ${i.message}`).join("\n"));
  return o;
}

export function rec(seq: number, text: string, source = "s", id = `${source}:${seq}`): DocRecord {
  return { id, source, text, meta: { n: seq }, origin: { file: `${source}.txt`, line: seq + 1 }, seq };
}

export async function runStage(def: DedupDefinition, raw: unknown, records: DocRecord[], seed = 7, workDir = mkdtempSync(join(tmpdir(), "siftpack-dedup-"))): Promise<StageRun> {
  const drops: Drop[] = [];
  const files: string[] = [];
  const quiet = () => undefined;
  const logged: any[] = [];
  const debugged: any[] = [];
  const counts: Record<string, number> = {};
  const ctx: StageContext = {
    seed,
    drop: (record, reason, detail) => drops.push({ record, reason, detail }),
    log: { info: (o) => logged.push(o), warn: quiet, error: quiet, debug: (o) => debugged.push(o) },
    workDir,
    addOutputFile: (p) => files.push(p),
    count: (name, n = 1) => (counts[name] = (counts[name] ?? 0) + n),
  };
  const stage = await def.create(resolve(def, raw));
  async function* source() {
    for (const r of records) yield structuredClone(r);
  }
  const kept: DocRecord[] = [];
  for await (const r of stage(source(), ctx)) kept.push(r);
  const clusterFile = files.findLast((f) => f.startsWith("clusters"));
  const clusters = clusterFile
    ? readFileSync(join(workDir, clusterFile), "utf8")
        .split("\n")
        .filter(Boolean)
        .map((l) => JSON.parse(l))
    : [];
  return { kept, drops, workDir, files, clusters, logged, debugged, counts };
}

/**
 * A generated corpus: `bases` documents of 60–150 words from a 3000-word vocabulary, each followed by
 * `copies` near-copies with `edits` words replaced (similarity ≈ 0.8–0.95 at 5-word shingles), then
 * shuffled deterministically. Returns the records and, per record, the base it came from.
 */
export function generated(bases: number, copies: number, edits: number, seed = 1): { records: DocRecord[]; family: number[] } {
  let s = seed >>> 0;
  const rnd = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
  const syll = ["ka", "lo", "mi", "ne", "su", "ta", "ri", "po", "de", "va", "gu", "zo"];
  const vocab = Array.from({ length: 3000 }, (_, i) => syll[i % 12] + syll[Math.floor(i / 12) % 12] + syll[Math.floor(i / 144) % 12] + (i >= 1728 ? "x" : ""));
  const items: { text: string; family: number }[] = [];
  for (let b = 0; b < bases; b++) {
    const words = Array.from({ length: 60 + Math.floor(rnd() * 90) }, () => vocab[Math.floor(rnd() * vocab.length)]);
    items.push({ text: words.join(" "), family: b });
    for (let c = 0; c < copies; c++) {
      const w = [...words];
      for (let e = 0; e < edits; e++) w[Math.floor(rnd() * w.length)] = vocab[Math.floor(rnd() * vocab.length)];
      items.push({ text: w.join(" "), family: b });
    }
  }
  for (let i = items.length - 1; i > 0; i--) {
    const j = Math.floor(rnd() * (i + 1));
    [items[i], items[j]] = [items[j], items[i]];
  }
  return { records: items.map((it, i) => rec(i, it.text, i % 3 === 0 ? "manuals" : "tickets")), family: items.map((it) => it.family) };
}

/** Files and folders the stage left in its work directory (only its declared outputs should remain). */
export function leftovers(run: StageRun): string[] {
  return readdirSync(run.workDir).filter((f) => !run.files.includes(f));
}
