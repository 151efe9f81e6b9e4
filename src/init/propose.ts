// From files to a proposed pipeline: recognise each file, group them into sources, sample, choose fields and stages.
import { stat } from "node:fs/promises";
import { basename, dirname, extname, relative, resolve } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import { parsePipeline } from "../pipeline/load.js";
import { sniff, type Sniffed } from "./sniff.js";
import { groupFiles } from "./group.js";
import { sampleFiles } from "./sample.js";
import { chooseFields } from "./fields.js";
import { pipelineText, type SourceProposal, type StageProposal } from "./pipeline-text.js";

export interface ProposeOptions {
  /** Rows read per file. */
  rows: number;
  /** Files sampled per source (the first ones in byte order). */
  files: number;
  /** Where the pipeline file will be written (relative paths in it are relative to its folder). */
  out: string;
  command: string;
}

export interface Proposal {
  text: string;
  sources: SourceProposal[];
  stages: StageProposal;
}

/** Held-out shares to choose from: the smallest that gives each held-out split about 50 records. */
const HOLDOUTS = [0.01, 0.02, 0.05, 0.1];
const MIN_HELD_OUT = 50;

/**
 * split.by names one field for every source: the group key most sources have (the first of them on
 * a tie). Sources without it are split record by record, and the comment above split names them.
 */
function splitGroup(sources: SourceProposal[]): StageProposal["group"] {
  const by = new Map<string, SourceProposal[]>();
  for (const s of sources) if (s.fields.group) by.set(s.fields.group.field, [...(by.get(s.fields.group.field) ?? []), s]);
  const best = [...by.entries()].reduce<[string, SourceProposal[]] | undefined>((a, e) => (a === undefined || e[1].length > a[1].length ? e : a), undefined);
  if (!best) return undefined;
  const [field, list] = best;
  const g = list[0].fields.group!;
  return {
    field,
    noun: g.noun,
    values: Math.max(...list.map((s) => s.fields.group!.values)),
    perValue: g.perValue,
    sources: list.map((s) => s.group.name),
    others: sources.filter((s) => !list.includes(s)).map((s) => s.group.name),
  };
}

export async function propose(paths: string[], o: ProposeOptions): Promise<Proposal> {
  const files: { path: string; sniffed: Sniffed }[] = [];
  for (const path of paths) {
    const info = await stat(path).catch((err) => {
      throw new SiftpackError("SP_INPUT_MISSING", `cannot read "${path}": ${describeSystemError(err)}`, { cause: err });
    });
    if (!info.isFile()) throw new SiftpackError("SP_INPUT_MISSING", `"${path}" is not a file; name the files (a shell glob such as data/*.jsonl works)`);
    files.push({ path, sniffed: await sniff(path) });
  }
  const baseDir = dirname(resolve(o.out));
  const groups = await groupFiles(files, baseDir);
  const sources: SourceProposal[] = [];
  for (const group of groups) {
    const sampled = group.files.slice(0, o.files);
    const sample = await sampleFiles(sampled, group.sniffed.format, o.rows);
    if (sampled.length < group.files.length) sample.complete = false;
    if (sample.rows === 0) {
      throw new SiftpackError("SP_INPUT_FORMAT", `source "${group.name}": no readable row in the sample of ${sampled.map((f) => relative(".", f)).join(", ")}`, { details: sample.errors });
    }
    const fields = chooseFields(sample);
    if (!fields) {
      const names = [...sample.fields.keys()].join(", ");
      throw new SiftpackError("SP_INPUT_FORMAT", `source "${group.name}": no field holds text in at least half of the sampled rows (fields: ${names || "none"})`);
    }
    sources.push({ group, sample, fields, sampledFiles: sampled.length });
  }

  // min_words 5 unless that would drop more than a tenth of the sampled texts (short records: 1).
  const texts = sources.map((s) => s.sample.fields.get(s.group.sniffed.format === "text" ? "text" : s.fields.text));
  const words = texts.flatMap((f) => f?.words ?? []);
  const below = (n: number) => (words.length === 0 ? 0 : words.filter((w) => w < n).length / words.length);
  const minWords = below(5) <= 0.1 ? 5 : 1;
  // Records are known exactly when every file was read whole, or are files (format text).
  const counts = sources.map((s) => (s.group.sniffed.format === "text" ? s.group.files.length : s.sample.complete ? s.sample.rows : undefined));
  const records = counts.every((c) => c !== undefined) ? counts.reduce((a: number, c) => a + c!, 0) : undefined;
  const holdout = records === undefined ? HOLDOUTS[0] : (HOLDOUTS.find((h) => h * records >= MIN_HELD_OUT) ?? HOLDOUTS[HOLDOUTS.length - 1]);
  // split.by may name a field some sources lack (their records are split by id).
  const metaFields = [...new Set(sources.flatMap((s) => s.fields.meta))];
  const stages: StageProposal = {
    minWords,
    minWordsDrops: below(minWords),
    holdout,
    records,
    groupFields: metaFields.map((k) => [k, Math.max(...sources.map((s) => s.fields.metaValues[k] ?? 0))]),
    group: splitGroup(sources),
  };
  const stemName = basename(o.out, extname(o.out)) || "pipeline";
  const outputDir = `build/${stemName.replace(/[^A-Za-z0-9_.-]+/g, "-")}`;
  const text = pipelineText(sources, stages, outputDir, o.command);
  // The proposal must be a file `plan` accepts; a failure here is a bug in the proposal, said as such.
  parsePipeline(text, o.out);
  return { text, sources, stages };
}
