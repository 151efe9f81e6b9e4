// Writes the proposed pipeline as a commented YAML file: sources as found, then a sensible default chain of stages.
import type { FieldChoice } from "./fields.js";
import type { FileGroup } from "./group.js";
import type { Sample } from "./sample.js";

export interface SourceProposal {
  group: FileGroup;
  sample: Sample;
  fields: FieldChoice;
  /** Files whose rows were sampled. */
  sampledFiles: number;
}

export interface StageProposal {
  minWords: number;
  /** Share of the sampled texts that min_words drops. */
  minWordsDrops: number;
  /** Held-out fraction for val and for test. */
  holdout: number;
  /** Records counted when every file was read whole; undefined otherwise. */
  records?: number;
  /** Meta fields found in every source, with their distinct values in the sample. */
  groupFields: [string, number][];
  /** The group key proposed as split.by: a page, document, thread or author field whose values repeat. */
  group?: {
    field: string;
    noun: string;
    /** Distinct values in the sample, and rows per value on average (of the first source holding it). */
    values: number;
    perValue: number;
    /** Sources holding it, and the others (split record by record). */
    sources: string[];
    others: string[];
  };
}

/** YAML 1.2 reads these plain words as booleans, null or numbers; they are quoted. */
const RESERVED = /^(true|false|null|yes|no|on|off|y|n|~|[-+.\d].*)$/i;

/** A YAML scalar: plain when it is a simple word, else a JSON string (valid YAML). */
export function scalar(s: string): string {
  return /^[A-Za-z_][A-Za-z0-9_\-]*$/.test(s) && !RESERVED.test(s) ? s : JSON.stringify(s);
}

function plural(n: number, word: string): string {
  return `${n} ${word}${n === 1 ? "" : "s"}`;
}

function sourceBlock(p: SourceProposal): string[] {
  const { group: g, sample: s, fields: f } = p;
  const lines: string[] = [];
  const how = `${g.sniffed.format}${g.sniffed.compression === "none" ? "" : `, ${g.sniffed.compression}-compressed`}${g.sniffed.by === "content" ? " (recognised from the content)" : ""}`;
  lines.push(`  # ${plural(g.files.length, "file")}, ${how}; ${plural(s.rows, "row")} sampled from ${plural(p.sampledFiles, "file")}${s.bad ? `, ${s.bad} unreadable` : ""}`);
  lines.push(`  - name: ${scalar(g.name)}`);
  lines.push(`    files: ${JSON.stringify(g.glob)}`);
  lines.push(`    format: ${g.sniffed.format}`);
  if (g.sniffed.format === "text") {
    lines.push(`    # each file is one document (mean ${Math.round(f.textMean)} characters in the sample)`);
  } else {
    lines.push(`    text: ${scalar(f.text)}${" ".repeat(Math.max(1, 24 - f.text.length))}# the longest string field on average: ${Math.round(f.textMean)} characters`);
  }
  if (f.id) lines.push(`    id: ${scalar(f.id)}${" ".repeat(Math.max(1, 26 - f.id.length))}# unique in the sample; a repeated id later is quarantined`);
  else if (g.sniffed.format !== "text") lines.push(`    # id: no field was unique in the sample; records are named by file and line ("${g.name}:<file>:<line>"), which no other file changes`);
  if (f.meta.length > 0) {
    const list = `[${f.meta.map(scalar).join(", ")}]`;
    lines.push(`    meta: ${list}${" ".repeat(Math.max(1, 24 - list.length))}# short repeating values, carried along (split.by can use them)`);
  }
  lines.push(`    # weight: 1.0            # below 1 keeps a seeded share of this source, above 1 repeats it in train`);
  return lines;
}

/** The whole file. `outputDir` is relative to the pipeline file. */
export function pipelineText(sources: SourceProposal[], stages: StageProposal, outputDir: string, command: string): string {
  const L: string[] = [];
  L.push(`# Pipeline proposed by \`${command}\` from a sample of the files.`);
  L.push(`# Check every choice, then: siftpack plan <this file>, and siftpack run <this file>.`);
  L.push(`siftpack: 1`);
  L.push(`seed: 0                      # every random choice (splits, shuffles, subsampling) derives from it`);
  L.push(`sources:`);
  for (const s of sources) L.push(...sourceBlock(s));
  L.push(`stages:`);
  L.push(`  - normalize: { form: NFKC }          # one Unicode form, \\n newlines, no control or zero-width characters`);
  L.push(`  # - redact: [email, phone, ip, card]  # if the texts may hold personal data (it finds common forms only)`);
  L.push(
    `  - filter: { min_words: ${stages.minWords} }             # drops ${(100 * stages.minWordsDrops).toFixed(1)} % of the sampled texts; \`rules: gopher\` adds quality rules for web text`,
  );
  L.push(`  # - language: { keep: [en], min_confidence: 0.5 }`);
  L.push(`  - dedup: { method: exact }            # same text after normalize: the first one is kept`);
  L.push(`  - dedup: { method: minhash, threshold: 0.8 }   # near-duplicates: clusters go to clusters.jsonl`);
  // The fields with the most values first: many small groups split more evenly than a few large ones.
  const hint = [...stages.groupFields]
    .sort((a, b) => b[1] - a[1])
    .slice(0, 3)
    .map(([k, n]) => `${k} (${n} values)`)
    .join(", ");
  const count = stages.records !== undefined ? `: about ${Math.round(stages.records * stages.holdout)} of the ${stages.records} records each` : "";
  const g = stages.group;
  if (g) {
    // Why a group matters, where the choice is made: split record by record, the parts of one page land in train and val alike.
    L.push(`  # by: ${g.field} keeps all records of one ${g.noun} in one split (${g.values} values in the sample, ${g.perValue.toFixed(1)} records each on average).`);
    L.push(`  # Without it, records are split one by one: parts of one ${g.noun} land in train and in val/test, and the held-out`);
    L.push(`  # figures measure memory of that ${g.noun} rather than generalisation.${g.others.length ? ` Sources without ${g.field} (${g.others.join(", ")}) are split record by record.` : ""}`);
    L.push(`  - split: { by: ${scalar(g.field)}, holdout: { val: ${stages.holdout}, test: ${stages.holdout} } }   # held-out shares of the ${g.noun}s`);
  } else {
    if (hint) L.push(`  # \`by: FIELD\` keeps all records with one value of FIELD in one split; fields in the sample: ${hint}`);
    L.push(`  - split: { holdout: { val: ${stages.holdout}, test: ${stages.holdout} } }   # held-out shares${count}`);
  }
  L.push(`  - tokenize: { encoding: gpt2, eos: true }   # or r50k_base, p50k_base, cl100k_base, o200k_base: the model's own`);
  L.push(`  - pack: { length: 1024, strategy: best-fit }   # length: the model's context length`);
  L.push(`output:`);
  L.push(`  dir: ${JSON.stringify(outputDir)}`);
  return L.join("\n") + "\n";
}
