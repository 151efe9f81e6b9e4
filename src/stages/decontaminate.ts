// decontaminate: drops (or marks) training records sharing a word n-gram with protected evaluation texts.
import { existsSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { defineStage } from "./stage.js";
import { field, list, num, obj, str, type Infer } from "../pipeline/schema.js";
import { loadProtected, type ProtectedFile } from "../overlap/protected-set.js";
import { NgramHasher } from "../overlap/ngram-hash.js";
import { WORD_FORMS, wordsOf, type WordForm } from "../overlap/words.js";
import type { StageContext } from "../types.js";

export const decontaminateOptions = obj({
  /** Protected files or globs, relative to the pipeline file; plain text, passages separated by blank lines. */
  against: field(list(str({ nonEmpty: true }), { nonEmpty: true, orSingle: true }), { required: true }),
  /** Words per n-gram. 13 is the length used for the contamination study of Brown et al. 2020 (appendix C; from memory). */
  ngram: field(num({ integer: true, min: 1, max: 64 }), { default: 13 }),
  action: field(str({ oneOf: ["drop", "mark"] as const }), { default: "drop" as "drop" | "mark" }),
  /** Unicode form applied to both sides before lower-casing and cutting words. */
  form: field(str({ oneOf: WORD_FORMS }), { default: "NFKC" as WordForm }),
});
export type DecontaminateOptions = Infer<typeof decontaminateOptions>;

export interface Contamination {
  /** The first shared n-gram, as normalized words joined by single spaces. */
  ngram: string;
  /** The protected file it comes from (relative to the pipeline file). */
  file: string;
}

/** The first n-gram of `text` found in the protected set, or undefined. */
export function findContamination(text: string, o: DecontaminateOptions, hasher: NgramHasher, grams: { get(hi: number, lo: number): number }, files: readonly ProtectedFile[]): Contamination | undefined {
  const words = wordsOf(text, o.form);
  const count = hasher.hash(words);
  for (let i = 0; i < count; i++) {
    const f = grams.get(hasher.hi[i], hasher.lo[i]);
    if (f >= 0) return { ngram: words.slice(i, i + o.ngram).join(" "), file: files[f].path };
  }
  return undefined;
}

/** decontaminate.json, decontaminate-2.json, …: the first name not yet written in this build. */
function reportName(workDir: string): string {
  for (let i = 1; ; i++) {
    const name = i === 1 ? "decontaminate.json" : `decontaminate-${i}.json`;
    if (!existsSync(join(workDir, name))) return name;
  }
}

/** What one instance saw: records checked, matches in input order, and the protected set it loaded. */
interface DecontaminateSummary {
  checked: number;
  matches: Record<string, unknown>[];
  files: readonly ProtectedFile[];
  distinct_ngrams: number;
}

/** decontaminate.json: what the build was decontaminated against, and what matched (the ledger's kept lines do not carry marks). */
function writeReport(o: DecontaminateOptions, summaries: DecontaminateSummary[], ctx: Pick<StageContext, "workDir" | "addOutputFile">): void {
  const name = reportName(ctx.workDir);
  const { files, distinct_ngrams } = summaries[0];
  const report = {
    ngram: o.ngram,
    form: o.form,
    action: o.action,
    files,
    distinct_ngrams,
    // A training n-gram is taken for a protected one by hash collision with about this probability per lookup.
    collision_rate_per_lookup: distinct_ngrams / 2 ** 64,
    checked: summaries.reduce((a, s) => a + s.checked, 0),
    matches: summaries.flatMap((s) => s.matches),
  };
  writeFileSync(join(ctx.workDir, name), JSON.stringify(report, null, 2) + "\n");
  ctx.addOutputFile(name);
}

export default defineStage({
  name: "decontaminate",
  summary: "drops (or marks) training records sharing a word n-gram with protected evaluation texts; place it after split",
  // Text is never changed (records are dropped or get meta.contaminated), so cached token ids stay valid.
  // Not per-record: it needs each record's split and writes one report over the whole stream
  // (per file in a build's task plan, the report gathered from every file's matches).
  options: decontaminateOptions,
  async create(o, env) {
    const set = await loadProtected(o.against, env.baseDir, o.ngram, o.form, "decontaminate");
    // Said once per instance, not once per input file when it runs per file.
    let told = false;
    return async function* decontaminate(input, ctx) {
      const hasher = new NgramHasher(o.ngram);
      if (!told) {
        told = true;
        for (const f of set.files)
          if (f.short_passages > 0) ctx.log.warn({ stage: "decontaminate", file: f.path, short_passages: f.short_passages, ngram: o.ngram }, "protected passages shorter than one n-gram cannot be matched");
        ctx.log.info({ stage: "decontaminate", files: set.files.length, distinct_ngrams: set.grams.size, bytes: set.grams.bytes }, "protected n-grams loaded");
      }
      let checked = 0;
      const matches: Record<string, unknown>[] = [];
      for await (const r of input) {
        // Only training text is checked: held-out splits are for evaluation and keep whatever they hold.
        // Records without a split are training records, which is also why this stage belongs after split.
        if (r.split === undefined || r.split === "train") {
          checked++;
          const hit = findContamination(r.text, o, hasher, set.grams, set.files);
          if (hit) {
            matches.push({ source: r.source, id: r.id, ...hit });
            if (o.action === "drop") {
              ctx.drop(r, "decontaminated", { ...hit });
              continue;
            }
            r.meta.contaminated = hit;
            ctx.count("decontaminate:marked");
          }
        }
        yield r;
      }
      ctx.count("decontaminate:checked", checked);
      const summary: DecontaminateSummary = { checked, matches, files: set.files, distinct_ngrams: set.grams.size };
      if (env?.perFile && ctx.summarize) ctx.summarize(summary);
      else writeReport(o, [summary], ctx);
    };
  },
  form: {
    kind: "unit",
    async gather(summaries, o, ctx) {
      const list = summaries as DecontaminateSummary[];
      // Without any input file no instance ran: the report still names what the build was checked against.
      if (list.length === 0) {
        const set = await loadProtected(o.against, ctx.baseDir, o.ngram, o.form, "decontaminate");
        list.push({ checked: 0, matches: [], files: set.files, distinct_ngrams: set.grams.size });
      }
      writeReport(o, list, ctx);
    },
  },
  explain(o) {
    return { words: `${o.form === "none" ? "" : o.form + ", "}format characters removed, lower-cased, runs of letters, marks and digits`, checks: "records whose split is train (or unset)" };
  },
});
