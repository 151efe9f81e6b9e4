// A build as phases of independent tasks. Input files are the units of work: every per-file phase
// writes one output per input file, so what a task does depends on its files and not on how many
// tasks there are, and any number of tasks gives the same bytes.
//
//   read                 per input file: read, map, the leading per-record stages
//   pass-N               per input file: per-record stages, split and decontaminate (their whole-stream
//                        checks gathered in assemble), tokenize
//   exact-dups           per partition of text hashes: the first of every group of equal texts (hashes from the pass before)
//   buckets              per bucket partition: candidate pairs from shared band buckets, confirmed by signature
//   clusters             one task: near-duplicate clusters, the kept record of each
//   lines                per partition of line keys: lines repeated in min_docs records (strip_repeated_lines)
//   whole-N              one task: stages that need the whole stream in one instance (tokenizer training,
//                        MinHash with exact confirmation, stages added by a library user)
//   assemble             one task: ledger, packing, shuffle, shards, manifest
//
// A decision of exact-dups, clusters or lines is applied by whichever phase reads the records next.
import { dirname, basename, join, isAbsolute, resolve } from "node:path";
import type { LoadedPipeline } from "../pipeline/load.js";
import type { StageEntry } from "../pipeline/config.js";
import { BUILTIN_STAGES, STAGES } from "../stages/index.js";
import type { MinhashOptions } from "../dedup/options.js";
import type { TokenizeOptions } from "../stages/tokenize.js";
import type { PhaseInfo, TaskPlan } from "./plan-types.js";

/** What a phase does; `entries` are the pipeline's stage entries it runs. */
export type PhaseKind =
  | { kind: "read"; entries: StageEntry[]; collect?: Collect }
  | { kind: "pass"; entries: StageEntry[]; collect?: Collect }
  | { kind: "exact"; entry: StageEntry }
  | { kind: "buckets"; entry: StageEntry }
  | { kind: "clusters"; entry: StageEntry; ordinal: number }
  | { kind: "lines"; entry: StageEntry }
  | { kind: "whole"; entries: StageEntry[] }
  | { kind: "assemble" };

/** What a per-file phase gathers for the global step after it. */
export type Collect = { kind: "exact" } | { kind: "minhash"; entry: StageEntry } | { kind: "lines"; entry: StageEntry };

export interface Phase extends PhaseInfo {
  /** Phases before it whose outputs it reads: a task refuses to start until they are complete. */
  index: number;
  /** True when each task handles a share of the input files (else of bucket partitions, or one task). */
  perFile: boolean;
  does: PhaseKind;
}

export interface PhasePlan extends TaskPlan {
  phases: Phase[];
  /** Tasks of the per-file and per-partition phases. */
  tasks: number;
}

export function workDirOf(p: LoadedPipeline): string {
  const w = p.config.cluster.work_dir;
  if (w === undefined) return join(dirname(p.outDir), `.${basename(p.outDir)}.work`);
  return isAbsolute(w) ? w : resolve(p.baseDir, w);
}

const isExact = (e: StageEntry) => e.name === "dedup" && e.options.method !== "minhash";
/** MinHash with signature confirmation splits into buckets + clusters; `confirm: exact` re-reads texts, so it runs whole. */
const isMinhash = (e: StageEntry) => e.name === "dedup" && e.options.method === "minhash" && (e.options as MinhashOptions).confirm !== "exact";
const isLines = (e: StageEntry) => e.name === "strip_repeated_lines";
/** Steps with a gathering pass, a global phase (or two) and a decision the next reader applies. */
const isGlobal = (e: StageEntry) => isExact(e) || isMinhash(e) || isLines(e);
/** Stages the read phase runs: built-in, one record at a time (ids are not final there), not a tokenizer in training. */
const perRecord = (e: StageEntry) =>
  BUILTIN_STAGES.has(e.name) && STAGES[e.name].perRecord === true && !(e.name === "tokenize" && (e.options as TokenizeOptions).train !== undefined);
/** Stages a per-file pass runs: those, and built-in stages whose whole-stream work is a per-file summary plus `gather`. */
const perFile = (e: StageEntry) => perRecord(e) || (BUILTIN_STAGES.has(e.name) && STAGES[e.name].gather !== undefined);

export function planPhases(p: LoadedPipeline, tasks = p.config.cluster.tasks): PhasePlan {
  const entries = p.config.stages.filter((e) => e.name !== "pack");
  const phases: Phase[] = [];
  const add = (name: string, count: number, perFileTasks: boolean, does: PhaseKind, summary: string) => {
    let unique = name;
    for (let n = 2; phases.some((ph) => ph.name === unique); n++) unique = `${name}-${n}`;
    phases.push({ name: unique, tasks: count, perFile: perFileTasks, does, summary, index: phases.length });
  };
  // The read phase runs the leading per-file stages; default ids are fixed only after it (they count
  // rows across a source's files), so `split` and library stages never run there.
  let i = 0;
  const readEntries: StageEntry[] = [];
  while (i < entries.length && perRecord(entries[i])) readEntries.push(entries[i++]);
  // The per-file phase last added: the next global step gathers its material there.
  let current: { entries: StageEntry[]; collect?: Collect } = { kind: "read", entries: readEntries } as PhaseKind & { entries: StageEntry[] };
  add("read", tasks, true, current as PhaseKind, "read input files, map fields, run the leading per-record stages");
  let minhashes = 0;
  let passes = 1;
  while (i < entries.length) {
    const e = entries[i];
    if (isGlobal(e)) {
      current.collect = isExact(e) ? { kind: "exact" } : isLines(e) ? { kind: "lines", entry: e } : { kind: "minhash", entry: e };
      if (isExact(e)) add("exact-dups", tasks, false, { kind: "exact", entry: e }, "per partition of text hashes: the first of every group of equal texts stays");
      else if (isLines(e)) add("lines", tasks, false, { kind: "lines", entry: e }, "per partition of line keys: lines found in at least min_docs records");
      else {
        minhashes++;
        add("buckets", tasks, false, { kind: "buckets", entry: e }, "candidate pairs from shared band buckets, confirmed by signature");
        add("clusters", 1, false, { kind: "clusters", entry: e, ordinal: minhashes }, "near-duplicate clusters and the record each keeps");
      }
      i++;
      // The next global step collects in a pass of its own, which also applies this decision.
      if (i < entries.length && isGlobal(entries[i])) {
        current = { kind: "pass", entries: [] } as PhaseKind & { entries: StageEntry[] };
        add(`pass-${++passes}`, tasks, true, current as PhaseKind, "apply the decision before, gather for the next");
      }
      continue;
    }
    if (perFile(e)) {
      const run: StageEntry[] = [];
      while (i < entries.length && perFile(entries[i])) run.push(entries[i++]);
      current = { kind: "pass", entries: run } as PhaseKind & { entries: StageEntry[] };
      add(`pass-${++passes}`, tasks, true, current as PhaseKind, `per file: ${run.map((r) => r.name).join(", ")}`);
      continue;
    }
    const run: StageEntry[] = [];
    while (i < entries.length && !perFile(entries[i]) && !isGlobal(entries[i])) run.push(entries[i++]);
    add(`whole-${phases.filter((ph) => ph.does.kind === "whole").length + 1}`, 1, false, { kind: "whole", entries: run }, `one stream: ${run.map((r) => r.name).join(", ")}`);
    // A per-file pass after a whole step may gather for a global step; give it one to attach to.
    current = { kind: "pass", entries: [] } as PhaseKind & { entries: StageEntry[] };
    if (i < entries.length && isGlobal(entries[i])) add(`pass-${++passes}`, tasks, true, current as PhaseKind, "gather for the next step");
  }
  add("assemble", 1, false, { kind: "assemble" }, "ledger, packing, shuffle, shards, manifest");
  return { pipeline: resolve(p.file), workDir: workDirOf(p), outDir: p.outDir, phases, tasks };
}

/** The share of `count` items (input files or bucket partitions) task `index` of `tasks` handles: a contiguous range. */
export function shareOf(index: number, tasks: number, count: number): { from: number; to: number } {
  return { from: Math.floor((index * count) / tasks), to: Math.floor(((index + 1) * count) / tasks) };
}
