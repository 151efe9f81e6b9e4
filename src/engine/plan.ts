// A build as phases of independent tasks, planned from the stages' declared forms alone (see
// src/stages/stage.ts): the engine knows no stage by name. Units of work are input files (or parts
// of large ones): a per-unit phase writes one output per unit, so what a task does depends on its
// units and not on how many tasks there are, and any number of tasks gives the same bytes.
//
//   read        per unit: read, map fields, the leading built-in stages of form `record`
//   pass-N      per unit: apply the decisions of the keyed steps before, run the stages of form
//               `record` and `unit` that follow, and collect for the next keyed stage (a pass
//               without stages only collects, and writes no records: unit-io.ts, materializes)
//   <keyed>     per partition of keys: a keyed stage's partition step (its name: exact-dups, buckets, lines, …)
//   <resolve>   one task: a keyed stage's resolve step, when it has one (clusters)
//   whole-N     one task: consecutive stages of form `whole`, over every record in order
//   ids         per partition of ids (when a source has explicit ids): repeated ids across units
//   pack        per packing group: ledger, packing (the `sink` stage), shuffle, shards, and the
//               analyses' collection
//   analysis    per partition of keys: the analyses' partition steps (overlap between splits)
//   assemble    one task: joins the groups and the analyses' results, manifest, publish
import { dirname, basename, join, isAbsolute, resolve } from "node:path";
import type { LoadedPipeline } from "../pipeline/load.js";
import type { StageEntry } from "../pipeline/config.js";
import { BUILTIN_STAGES, STAGES } from "../stages/index.js";
import { formOf, type StageForm } from "../stages/stage.js";
import type { KeyedForm } from "../stages/keyed.js";
import type { PhaseInfo, TaskPlan } from "./plan-types.js";
import { uniqueIdsForm } from "./unique-ids.js";
import { ANALYSES } from "../analysis/registry.js";
import type { AnalysisSteps } from "../analysis/steps.js";

/** What a phase does. `entries` are stage entries it runs; `keyed` indexes the pipeline's stage list. */
export type PhaseKind =
  | { kind: "read"; entries: StageEntry[] }
  | { kind: "pass"; entries: StageEntry[]; collect?: number }
  | { kind: "partition"; keyed: number }
  | { kind: "resolve"; keyed: number }
  | { kind: "whole"; entries: StageEntry[] }
  | { kind: "pack" }
  | { kind: "analysis" }
  | { kind: "assemble" };

export interface Phase extends PhaseInfo {
  index: number;
  /** True when each task handles a share of the units (else of the key partitions, or one task). */
  perUnit: boolean;
  does: PhaseKind;
}

/** Where one keyed stage's steps run: the pass that collects, the partition phase, the resolve phase. */
export interface KeyedSteps {
  entry: StageEntry;
  form: KeyedForm;
  collect: string;
  partition: string;
  resolve?: string;
}

export interface PhasePlan extends TaskPlan {
  phases: Phase[];
  /** Tasks of the per-unit and per-partition phases; also the number of key partitions. */
  tasks: number;
  /** The keyed stages, by their index in the pipeline's stage list (the ids check as -1). */
  keyed: Map<number, KeyedSteps>;
  /** The analyses that apply to this build (their figures go into the manifest). */
  analyses: AnalysisSteps[];
}

/** The index of the engine's own keyed step, the explicit-id check, in `PhasePlan.keyed`. */
export const IDS_CHECK = -1;

export function workDirOf(p: LoadedPipeline): string {
  const w = p.config.cluster.work_dir;
  if (w === undefined) return join(dirname(p.outDir), `.${basename(p.outDir)}.work`);
  return isAbsolute(w) ? w : resolve(p.baseDir, w);
}

const form = (e: StageEntry): StageForm => formOf(STAGES[e.name], e.options);
/**
 * Stages the read phase runs: of form `record` and built in. Default ids are final only after
 * the read phase (they count rows across a source's files); the built-in stages never read ids,
 * and a worker thread can rebuild them from their names.
 */
const readable = (e: StageEntry) => BUILTIN_STAGES.has(e.name) && form(e).kind === "record";

export function planPhases(p: LoadedPipeline, tasks = p.config.cluster.tasks): PhasePlan {
  const stages = p.config.stages;
  const phases: Phase[] = [];
  const keyed = new Map<number, KeyedSteps>();
  const add = (name: string, count: number, perUnit: boolean, does: PhaseKind, summary: string): Phase => {
    let unique = name;
    for (let n = 2; phases.some((ph) => ph.name === unique); n++) unique = `${name}-${n}`;
    const ph: Phase = { name: unique, tasks: count, perUnit, does, summary, index: phases.length };
    phases.push(ph);
    return ph;
  };
  let i = 0;
  const readEntries: StageEntry[] = [];
  while (i < stages.length && readable(stages[i])) readEntries.push(stages[i++]);
  add("read", tasks, true, { kind: "read", entries: readEntries }, "read input files, map fields, run the leading per-record stages");
  // Explicit ids must be unique across a source's units: collected while reading, checked per partition of ids.
  if (p.config.sources.some((s) => s.id !== undefined)) {
    const ph = add("ids", tasks, false, { kind: "partition", keyed: IDS_CHECK }, "explicit ids: the first unit of every id keeps it, later ones are quarantined");
    keyed.set(IDS_CHECK, { entry: { name: "ids", options: {} } as StageEntry, form: uniqueIdsForm, collect: "read", partition: ph.name });
  }
  // The open pass: per-unit stages join it until a keyed stage collects there.
  type PassPhase = Phase & { does: { kind: "pass"; entries: StageEntry[]; collect?: number } };
  let pass: PassPhase | undefined;
  let passes = 1;
  const openPass = (): PassPhase => (pass ??= add(`pass-${++passes}`, tasks, true, { kind: "pass", entries: [] }, "") as PassPhase);
  for (; i < stages.length; i++) {
    const e = stages[i];
    const f = form(e);
    if (f.kind === "sink") continue;
    if (f.kind === "record" || f.kind === "unit") {
      openPass().does.entries.push(e);
      continue;
    }
    if (f.kind === "keyed") {
      const at = openPass();
      at.does.collect = i;
      const part = add(f.steps.partition, tasks, false, { kind: "partition", keyed: i }, `${e.name}: per partition of keys`);
      const res = f.resolve ? add(f.steps.resolve ?? `${f.steps.partition}-resolve`, 1, false, { kind: "resolve", keyed: i }, `${e.name}: joins the partitions' results`) : undefined;
      keyed.set(i, { entry: e, form: f, collect: at.name, partition: part.name, resolve: res?.name });
      pass = undefined;
      continue;
    }
    const run: StageEntry[] = [e];
    while (i + 1 < stages.length && form(stages[i + 1]).kind === "whole") run.push(stages[++i]);
    add(`whole-${phases.filter((ph) => ph.does.kind === "whole").length + 1}`, 1, false, { kind: "whole", entries: run }, `one stream: ${run.map((r) => r.name).join(", ")}`);
    pass = undefined;
  }
  add("pack", tasks, false, { kind: "pack" }, "per packing group: ledger, packing, shuffle, shards, the analyses' collection");
  const analyses = ANALYSES.filter((a) => a.applies({ config: p.config, baseDir: p.baseDir }));
  if (analyses.length > 0) add("analysis", tasks, false, { kind: "analysis" }, `per partition of keys: ${analyses.map((a) => a.key).join(", ")}`);
  add("assemble", 1, false, { kind: "assemble" }, "joins the groups: ledger, shards, counts, figures, manifest; publishes");
  for (const ph of phases) {
    if (ph.does.kind !== "pass") continue;
    const { entries, collect } = ph.does;
    const parts = [...(entries.length ? [`per unit: ${entries.map((e) => e.name).join(", ")}`] : []), ...(collect !== undefined ? [`collect for ${stages[collect].name}`] : [])];
    // A pass without stages writes no records (unit-io.ts, materializes): it applies the decisions before only for its collector.
    ph.summary = entries.length ? `apply the decisions before; ${parts.join("; ")}` : `the records with the decisions before, ${parts.join("; ")}; writes no records`;
  }
  return { pipeline: resolve(p.file), workDir: workDirOf(p), outDir: p.outDir, phases, tasks, keyed, analyses };
}

/**
 * The items (units, packing groups or key partitions) of `count` that task `index` of `tasks`
 * handles, dealt round the tasks: index, index + tasks, … Neighbouring items fall to different tasks,
 * so the few that a rebuild after an append must compute again (the new file's, the last group) run
 * side by side instead of one after another in the same task.
 */
export function shareOf(index: number, tasks: number, count: number): number[] {
  const out: number[] = [];
  for (let i = index; i < count; i += tasks) out.push(i);
  return out;
}
