// The schema of the pipeline file (DESIGN.md §2) and the resolved configuration type.
import { bool, field, list, num, obj, str, literal, type Infer, type Issue, type Path, type Schema } from "./schema.js";
import { STAGES } from "../stages/index.js";
import { closest } from "../lib/did-you-mean.js";
import { formOf } from "../stages/stage.js";

export const FORMATS = ["jsonl", "json", "csv", "tsv", "text", "parquet"] as const;

const sourceSchema = obj({
  name: field(str({ nonEmpty: true }), { required: true }),
  files: field(str({ nonEmpty: true }), { required: true }),
  format: field(str({ oneOf: FORMATS }), { required: true }),
  text: field(str({ nonEmpty: true }), { default: "text" }),
  id: field(str({ nonEmpty: true })),
  meta: field(list(str({ nonEmpty: true })), { default: [] }),
  weight: field(num({ min: 0, max: 100 }), { default: 1 }),
  // Largest line (jsonl), record (csv, tsv) or file (text) read, in MiB; longer ones are quarantined.
  // No schema default (64 applies): an unset key leaves the resolved pipeline, its hash and manifest as before.
  // At most 256: a line becomes one string, and V8 strings end near 512 Mi characters.
  max_line_mb: field(num({ min: 0.001, max: 256 })),
  // Build from what could be read of a file that cannot be read to its end (a cut .gz or .zst, a
  // corrupt Parquet row group); unset, such a file fails the run. No schema default, as for max_line_mb.
  accept_truncated: field(bool()),
  // A conversation source: each record holds a list of turns (README, Conversations). No schema
  // default, so other sources resolve (and hash) as before.
  turns: field(
    obj({
      field: field(str({ nonEmpty: true }), { required: true }),
      role: field(str({ nonEmpty: true }), { default: "role" }),
      text: field(str({ nonEmpty: true }), { default: "text" }),
      roles: field(list(str({ nonEmpty: true }), { nonEmpty: true }), { required: true }),
    }),
  ),
});

/** Formats whose records can hold a list of turns. */
const TURN_FORMATS = ["jsonl", "json", "parquet"];

/** Formats whose readers hold a line (record, file) whole and so have a limit; json and parquet readers do not. */
const LINE_LIMITED = ["jsonl", "csv", "tsv", "text"];

export interface StageEntry {
  name: string;
  options: any;
}

/** One list item `- name: {options}`: a mapping with exactly one key naming a stage. */
const stageEntry: Schema<StageEntry> = {
  describe: "a stage: a mapping with one key, the stage name",
  check(value, path, issues) {
    const names = Object.keys(STAGES);
    if (typeof value === "string") value = { [value]: {} };
    if (value === null || typeof value !== "object" || Array.isArray(value) || Object.keys(value).length !== 1) {
      issues.push({ path, message: `expected a mapping with one key, the stage name (${names.join(", ")})` });
      return { name: "", options: {} };
    }
    const [name, opts] = Object.entries(value as Record<string, unknown>)[0];
    const def = STAGES[name];
    if (!def) {
      const near = closest(name, names);
      issues.push({ path: [...path, name], atKey: true, message: `unknown stage "${name}"${near ? ` (did you mean "${near}"?)` : ""}; stages: ${names.join(", ")}` });
      return { name, options: {} };
    }
    return { name, options: def.options.check(opts, [...path, name], issues) };
  },
};

export interface OverlapSettings {
  enabled: boolean;
  ngram: number;
  near_duplicates: boolean;
}

const overlapFields = obj({
  ngram: field(num({ integer: true, min: 1, max: 64 }), { default: 13 }),
  near_duplicates: field(bool(), { default: true }),
});

/** `overlap: false` switches the figures off; a mapping sets them (defaults: 13-grams, with near-duplicates). */
const overlapSchema: Schema<OverlapSettings> = {
  describe: "false, or a mapping { ngram, near_duplicates }",
  check(value, path, issues) {
    if (value === false) return { enabled: false, ngram: 13, near_duplicates: false };
    if (value === true) value = {};
    return { enabled: true, ...overlapFields.check(value, path, issues) };
  },
};

/** A mapping of names to values (the names are checked by the rules across keys, which know the sources). */
function mapOf<T>(value: Schema<T>, what: string): Schema<Record<string, T>> {
  const describe = `a mapping of ${what}`;
  return {
    describe,
    check(v, path, issues) {
      if (v === null || typeof v !== "object" || Array.isArray(v)) {
        issues.push({ path, message: `expected ${describe}, got ${Array.isArray(v) ? "a list" : v === null ? "null" : typeof v}` });
        return {};
      }
      const out: Record<string, T> = {};
      for (const [k, x] of Object.entries(v as Record<string, unknown>)) out[k] = value.check(x, [...path, k], issues);
      return out;
    },
  };
}

/**
 * The training mixture by token budget (README, Mixtures): shares of the train tokens per source
 * or group of sources, and optionally the budget. No schema default: a pipeline without it keeps
 * its resolved form and hash.
 */
const mixtureSchema = obj({
  train_tokens: field(num({ min: 1 })),
  shares: field(mapOf(num({ min: 0, max: 1 }), "source or group names to shares from 0 to 1"), { required: true }),
  groups: field(mapOf(list(str({ nonEmpty: true }), { nonEmpty: true }), "group names to lists of source names")),
  // Above this many epochs of any source the build fails with the figures (README, Mixtures).
  max_epochs: field(num({ min: 1, max: 1000 }), { default: 16 }),
});
export type MixtureConfig = Infer<typeof mixtureSchema>;

export const pipelineSchema = obj({
  siftpack: field(literal(1), { required: true }),
  seed: field(num({ integer: true, min: 0, max: 2 ** 32 - 1 }), { default: 0 }),
  max_bad_fraction: field(num({ min: 0, max: 1 }), { default: 0.01 }),
  overlap: field(overlapSchema, { default: { enabled: true, ngram: 13, near_duplicates: true } }),
  sources: field(list(sourceSchema, { nonEmpty: true }), { required: true }),
  mixture: field(mixtureSchema),
  stages: field(list(stageEntry, { nonEmpty: true }), { required: true }),
  output: field(
    obj({
      dir: field(str({ nonEmpty: true }), { required: true }),
      shard_blocks: field(num({ integer: true, min: 1 }), { default: 4096 }),
    }),
    { required: true },
  ),
  /** The build as phases of tasks: tasks per phase, and the work directory they share. */
  cluster: field(
    obj({
      tasks: field(num({ integer: true, min: 1, max: 100000 }), { default: 8 }),
      work_dir: field(str({ nonEmpty: true })),
      /** Uncompressed JSONL files larger than this (MB) are read as several units, cut at line boundaries. */
      unit_mb: field(num({ min: 0.01 }), { default: 16 }),
    }),
    { default: { tasks: 8, work_dir: undefined, unit_mb: 16 } },
  ),
});

export type PipelineConfig = Infer<typeof pipelineSchema>;
export type SourceConfig = PipelineConfig["sources"][number];

/**
 * Rules that span several keys: stage order, unique source names, split field carried as meta. They
 * run even when the schema found problems (so one report lists everything), on whatever of the
 * configuration could be resolved: a value the schema refused is skipped here, not reported twice.
 */
export function checkPipelineRules(c: PipelineConfig, issues: Issue[]): void {
  // Entries the schema could not read as mappings are skipped, keeping every other entry's index.
  const sources = (Array.isArray(c.sources) ? c.sources : []).map((s) => (s !== null && typeof s === "object" ? s : undefined));
  const stages = Array.isArray(c.stages) ? c.stages : [];
  const names = new Set<string>();
  sources.forEach((s, i) => {
    if (s === undefined) return;
    if (typeof s.name === "string" && s.name !== "") {
      if (names.has(s.name)) issues.push({ path: ["sources", i, "name"], message: `source name "${s.name}" is used twice` });
      names.add(s.name);
    }
    if (s.max_line_mb !== undefined && typeof s.format === "string" && (FORMATS as readonly string[]).includes(s.format) && !LINE_LIMITED.includes(s.format))
      issues.push({ path: ["sources", i, "max_line_mb"], atKey: true, message: `max_line_mb applies to formats ${LINE_LIMITED.join(", ")} only (format is ${s.format})` });
  });
  checkMixtureRules(c, sources, issues);
  if (!Array.isArray(c.stages)) return;
  checkConversationRules(sources, c.stages, issues);
  const at = (n: string) => stages.findIndex((s) => s.name === n);
  const tok = at("tokenize");
  const pack = at("pack");
  const stagesPath: Path = ["stages"];
  // An unknown stage name (already reported, with a close match) may be the missing tokenize or pack.
  const unknown = stages.some((s) => !(s.name in STAGES));
  if (tok < 0 && !unknown) issues.push({ path: stagesPath, message: `the stages need a "tokenize" stage` });
  if (pack < 0) {
    if (!unknown) issues.push({ path: stagesPath, message: `the stages need a "pack" stage, last` });
  } else if (pack !== stages.length - 1) issues.push({ path: ["stages", pack, "pack"], atKey: true, message: `"pack" must be the last stage` });
  if (tok >= 0 && pack >= 0 && tok > pack) issues.push({ path: ["stages", tok, "tokenize"], atKey: true, message: `"tokenize" must come before "pack"` });
  if (c.mixture && tok >= 0 && pack >= 0) {
    // The mixture is planned from the tokens of the records as written after tokenize; a stage that
    // decides over the whole corpus after it would remove records from under those figures.
    for (let i = tok + 1; i < pack; i++) {
      const def = STAGES[stages[i].name];
      if (def && formOfSafe(def, stages[i].options) === "keyed")
        issues.push({ path: ["stages", i, stages[i].name], atKey: true, message: `with a mixture, "${stages[i].name}" must come before "tokenize": the shares are planned from the tokens of the records that reach packing` });
    }
  }
  for (const n of ["tokenize", "pack", "split"]) {
    if (stages.filter((s) => s.name === n).length > 1) issues.push({ path: stagesPath, message: `"${n}" may appear only once` });
  }
  const splitAt = at("split");
  if (splitAt >= 0) {
    const by: unknown = stages[splitAt].options?.by;
    const metas = sources.flatMap((s) => (Array.isArray(s?.meta) ? s.meta.filter((m) => typeof m === "string") : []));
    // An empty or non-string `by` is the schema's to report.
    if (typeof by === "string" && by !== "" && !metas.includes(by)) {
      const near = closest(by, metas);
      issues.push({
        path: ["stages", splitAt, "split", "by"],
        message: `split.by is "${by}" but no source lists it in meta${near ? ` (did you mean "${near}"?)` : ""}; records without it are split by id`,
      });
    }
    if (tok >= 0 && splitAt > tok) issues.push({ path: ["stages", splitAt, "split"], atKey: true, message: `"split" must come before "tokenize"` });
    const decon = at("decontaminate");
    if (decon >= 0 && decon < splitAt)
      issues.push({ path: ["stages", decon, "decontaminate"], atKey: true, message: `"decontaminate" must come after "split": it checks training records only, and before split every record counts as training` });
  }
}

/** A mixture names existing sources (directly or through its groups), each once, with shares summing to 1, and no source has a weight too. */
function checkMixtureRules(c: PipelineConfig, sources: (SourceConfig | undefined)[], issues: Issue[]): void {
  const m = c.mixture;
  if (m === undefined || m === null || typeof m !== "object") return;
  const names = sources.flatMap((s) => (s && typeof s.name === "string" && s.name !== "" ? [s.name] : []));
  const list = names.map((n) => `"${n}"`).join(", ");
  // A plain factor and a share say two different things about the same source: one file uses one.
  sources.forEach((s, i) => {
    if (s && typeof s.weight === "number" && s.weight !== 1)
      issues.push({ path: ["sources", i, "weight"], atKey: true, message: `source "${s.name}" has a weight and the pipeline has a mixture; use one: the mixture's shares, or weights without a mixture` });
  });
  const groups = m.groups && typeof m.groups === "object" ? m.groups : {};
  const inGroup = new Map<string, string>();
  for (const [g, members] of Object.entries(groups)) {
    if (names.includes(g)) issues.push({ path: ["mixture", "groups", g], atKey: true, message: `group "${g}" has the name of a source; give the group another name` });
    if (!Array.isArray(members)) continue;
    members.forEach((s, i) => {
      if (typeof s !== "string" || s === "") return;
      if (!names.includes(s)) {
        const near = closest(s, names);
        issues.push({ path: ["mixture", "groups", g, i], message: `group "${g}" names source "${s}", which is not a source${near ? ` (did you mean "${near}"?)` : ""}; the sources are ${list}` });
      } else if (inGroup.has(s)) issues.push({ path: ["mixture", "groups", g, i], message: `source "${s}" is in two groups ("${inGroup.get(s)}" and "${g}"); a source belongs to one group at most` });
      else inGroup.set(s, g);
    });
  }
  const shares = m.shares && typeof m.shares === "object" ? m.shares : {};
  const covered = new Set<string>();
  let sum = 0;
  for (const [k, v] of Object.entries(shares)) {
    if (typeof v === "number") sum += v;
    if (k in groups) {
      for (const s of Array.isArray(groups[k]) ? groups[k] : []) covered.add(s);
      continue;
    }
    if (!names.includes(k)) {
      const near = closest(k, [...names, ...Object.keys(groups)]);
      issues.push({ path: ["mixture", "shares", k], atKey: true, message: `mixture.shares names source "${k}", which is not a source${Object.keys(groups).length ? " or group" : ""}${near ? ` (did you mean "${near}"?)` : ""}; the sources are ${list}` });
      continue;
    }
    if (inGroup.has(k)) issues.push({ path: ["mixture", "shares", k], atKey: true, message: `source "${k}" has a share of its own and is in group "${inGroup.get(k)}"; give it one or the other` });
    covered.add(k);
  }
  for (const g of Object.keys(groups)) if (!(g in shares)) issues.push({ path: ["mixture", "groups", g], atKey: true, message: `group "${g}" has no share in mixture.shares` });
  const missing = names.filter((n) => !covered.has(n) && !inGroup.has(n));
  // Every source is named, so that leaving one out of train is a decision (share 0), not a typo.
  if (missing.length) issues.push({ path: ["mixture", "shares"], message: `mixture.shares gives no share to ${missing.map((n) => `"${n}"`).join(", ")}; give every source (or a group holding it) a share, 0 to leave it out of train` });
  // Shares are fractions of one budget; 0.001 of slack lets thirds be written as 0.333.
  if (Object.keys(shares).length > 0 && Math.abs(sum - 1) > 0.001) issues.push({ path: ["mixture", "shares"], message: `mixture.shares sum to ${+sum.toFixed(6)}, not 1; the shares are fractions of the train tokens` });
}

/** A conversation source needs a format that holds lists and a tokenize template with a place for each of its roles. */
function checkConversationRules(sources: (SourceConfig | undefined)[], stages: StageEntry[], issues: Issue[]): void {
  const k = stages.findIndex((s) => s.name === "tokenize");
  const template = k >= 0 ? stages[k].options?.template : undefined;
  const templateRoles = template && typeof template.roles === "object" && template.roles !== null ? Object.keys(template.roles) : undefined;
  const p = stages.findIndex((s) => s.name === "pack");
  const pack = p >= 0 ? stages[p].options : undefined;
  if (pack?.strategy === "concat" && pack.long_conversations !== "anywhere" && sources.some((s) => s?.turns))
    issues.push({ path: ["stages", p, "pack", "strategy"], message: `concat cuts documents at every block edge, inside turns: conversations need best-fit or single (or long_conversations: anywhere to accept cuts inside turns)` });
  sources.forEach((s, i) => {
    const t = s?.turns;
    if (!s || t === undefined || t === null || typeof t !== "object") return;
    if (typeof s.format === "string" && (FORMATS as readonly string[]).includes(s.format) && !TURN_FORMATS.includes(s.format))
      issues.push({ path: ["sources", i, "turns"], atKey: true, message: `turns apply to formats ${TURN_FORMATS.join(", ")} (a ${s.format} field cannot hold a list)` });
    if (k < 0) return;
    if (templateRoles === undefined) {
      issues.push({ path: ["stages", k, "tokenize"], atKey: true, message: `source "${s.name}" has turns: tokenize needs a template saying how to render them` });
      return;
    }
    (Array.isArray(t.roles) ? t.roles : []).forEach((r, j) => {
      if (typeof r === "string" && r !== "" && !templateRoles.includes(r))
        issues.push({ path: ["sources", i, "turns", "roles", j], message: `role "${r}" has no markers in the tokenize template (its roles are ${templateRoles.join(", ")})` });
    });
  });
}

/** A stage's form kind, or undefined when its options are too broken to say (the schema reports them). */
function formOfSafe(def: (typeof STAGES)[string], options: unknown): string | undefined {
  try {
    return formOf(def, options).kind;
  } catch {
    return undefined;
  }
}
