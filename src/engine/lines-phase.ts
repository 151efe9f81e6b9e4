// strip_repeated_lines as phases. The pass before counts, per input file, in how many of the file's
// records each line occurs (the stage's LineCounts, its budget applied per file) and writes the
// counts partitioned by line key; the `lines` phase sums each partition over all files and keeps
// the keys found in at least min_docs records; whichever phase reads the records next strips them.
// Counts can only be too low (a budget prune forgets), never too high, as in the stage itself.
import { readFile } from "node:fs/promises";
import { join } from "node:path";
import { LineCounts, lineKey, stripLines, type StripRepeatedLinesOptions } from "../stages/strip-repeated-lines.js";
import type { DocRecord, StageContext } from "../types.js";
import type { Collector } from "./collect.js";
import { shareOf, type Phase } from "./plan.js";
import { AtomicStream, unitName, writeAtomic } from "./workdir.js";
import type { TaskEnv } from "./unit-io.js";
import { loadHasher } from "../lib/hash.js";

const part = (n: number) => String(n).padStart(5, "0");
export const lineCountsFile = (work: string, phase: string, p: number, u: number) => join(work, phase, "collect", "lines", part(p), `${unitName(u)}.bin`);
export const repeatedFile = (work: string, phase: string, p: number) => join(work, phase, "repeated", `${part(p)}.bin`);

/** Counts one file's lines; `finish` writes (key, records) pairs as float64, one file per partition. */
export async function openLinesCollector(o: StripRepeatedLinesOptions, work: string, phase: string, u: number, partitions: number, count: (name: string, n?: number) => void): Promise<Collector> {
  await loadHasher();
  const counts = new LineCounts(o.max_lines, o.min_chars);
  const outs: AtomicStream[] = [];
  for (let p = 0; p < partitions; p++) outs.push(await AtomicStream.open(lineCountsFile(work, phase, p, u)));
  return {
    add: async (r) => counts.addRecord(r.text),
    finish: async () => {
      const lists: number[][] = outs.map(() => []);
      for (const [key, n] of counts.entries()) lists[key % partitions].push(key, n);
      for (let p = 0; p < partitions; p++) {
        await outs[p].write(new Uint8Array(Float64Array.from(lists[p]).buffer));
        await outs[p].commit();
      }
      if (counts.prunes > 0) count("strip_repeated_lines:budget_prunes", counts.prunes);
    },
    abort: async () => {
      for (const out of outs) await out.abort();
    },
  };
}

/** lines: for each partition of the task's share, the keys of lines found in at least min_docs records over all files. */
export async function linesPhase(env: TaskEnv, from: Phase, count: (name: string, n?: number) => void): Promise<void> {
  const o = (env.phase.does as { entry: { options: StripRepeatedLinesOptions } }).entry.options;
  const { from: p0, to: p1 } = shareOf(env.index, env.phase.tasks, env.plan.tasks);
  let distinct = 0;
  let repeated = 0;
  for (let p = p0; p < p1; p++) {
    const sums = new Map<number, number>();
    for (const unit of env.units) {
      const raw = await readFile(lineCountsFile(env.plan.workDir, from.name, p, unit.u));
      const w = new Float64Array(raw.buffer.slice(raw.byteOffset, raw.byteOffset + raw.byteLength));
      for (let x = 0; x < w.length; x += 2) sums.set(w[x], (sums.get(w[x]) ?? 0) + w[x + 1]);
    }
    const keys: number[] = [];
    for (const [k, n] of sums) if (n >= o.min_docs) keys.push(k);
    keys.sort((a, b) => a - b);
    distinct += sums.size;
    repeated += keys.length;
    await writeAtomic(repeatedFile(env.plan.workDir, env.phase.name, p), new Uint8Array(Float64Array.from(keys).buffer));
  }
  count("strip_repeated_lines:distinct_lines", distinct);
  // Raised where the records are stripped; present (as 0) even when no line repeats.
  count("strip_repeated_lines:lines_removed", 0);
  count("strip_repeated_lines:records_changed", 0);
  env.log.info({ phase: env.phase.name, task: env.index, distinct_lines: distinct, repeated_lines: repeated }, "repeated lines found");
}

/** The repeated lines of a `lines` phase as the count lookup stripLines takes (min_docs for a repeated line, else 0). */
export function repeatedLines(env: TaskEnv, phase: Phase): Promise<(r: DocRecord, drop: StageContext["drop"], count: (name: string, n?: number) => void) => boolean> {
  // Loaded once per task: every file's reader applies the same set.
  let byPhase = loaded.get(env);
  if (!byPhase) loaded.set(env, (byPhase = new Map()));
  let p = byPhase.get(phase.name);
  if (!p) byPhase.set(phase.name, (p = loadRepeatedLines(env, phase)));
  return p;
}

const loaded = new WeakMap<TaskEnv, Map<string, ReturnType<typeof loadRepeatedLines>>>();

async function loadRepeatedLines(env: TaskEnv, phase: Phase): Promise<(r: DocRecord, drop: StageContext["drop"], count: (name: string, n?: number) => void) => boolean> {
  const o = (phase.does as { entry: { options: StripRepeatedLinesOptions } }).entry.options;
  const keys = new Set<number>();
  for (let p = 0; p < env.plan.tasks; p++) {
    const raw = await readFile(repeatedFile(env.plan.workDir, phase.name, p));
    for (const k of new Float64Array(raw.buffer.slice(raw.byteOffset, raw.byteOffset + raw.byteLength))) keys.add(k);
  }
  const lookup = {
    count: (line: string) => {
      const k = lineKey(line, o.min_chars);
      return k !== undefined && keys.has(k) ? o.min_docs : 0;
    },
  };
  // Strips one record; false when nothing is left of it (dropped here).
  return (r, drop, count) => {
    if (keys.size === 0) return true;
    const { text, removed } = stripLines(r.text, lookup, o.min_docs);
    if (removed === 0) return true;
    count("strip_repeated_lines:lines_removed", removed);
    count("strip_repeated_lines:records_changed");
    r.text = text;
    if (text.trim() === "") {
      drop(r, "strip_repeated_lines:empty", { lines_removed: removed });
      return false;
    }
    return true;
  };
}
