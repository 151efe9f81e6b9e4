// decontaminate: drops (or marks) training records sharing a word n-gram with protected evaluation texts.
//
// Two forms, by whether n-grams common in the corpus are ignored (`boilerplate_docs`):
//
// - Without it, form `unit`: each unit's records are checked and decided at once; each unit hands on
//   its counts (records checked, records per protected n-gram, matches) and `gather` joins them into
//   decontaminate.json and the warning. No extra pass over the records.
// - With it, keyed steps, because a record's fate then depends on how many records in the whole
//   corpus share its n-grams:
//     collect (per unit)   every checked training record's protected n-grams (each once per record):
//                          their keys into the partition of the key, the n-grams in text order into
//                          the unit's own file
//     partition            in how many checked records each protected n-gram occurs (summed over units)
//     resolve (one task)   n-grams in more than `boilerplate_docs` records are ignored; every record
//                          with another protected n-gram is decided on (its first such n-gram); writes
//                          decontaminate.json and warns above `warn_share`
//     apply                the next reader drops (or marks) the decided records
//   The counts are sums over units and the decisions follow units in build order, so the result is
//   the same for any cut of the input and any number of partitions.
import { availableParallelism } from "node:os";
import { existsSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { freeName } from "../lib/numbered-name.js";
import { defineStage, type GatherContext } from "./stage.js";
import { keyedStage, type KeyedForm } from "./keyed.js";
import { field, list, num, obj, str, type Infer } from "../pipeline/schema.js";
import { loadProtected, resolveProtected, type ProtectedFile } from "../overlap/protected-set.js";
import { NgramHasher } from "../overlap/ngram-hash.js";
import { WORD_FORMS, wordsOf, type WordForm } from "../overlap/words.js";
import { announce, makeReport, type DecontaminateReport, type NgramCount } from "./decontaminate-report.js";
import type { StageContext } from "../types.js";

export const decontaminateOptions = obj({
  /** Protected files or globs, relative to the pipeline file; plain text, passages separated by blank lines. */
  against: field(list(str({ nonEmpty: true }), { nonEmpty: true, orSingle: true }), { required: true }),
  /** Words per n-gram. 13 is the length used for the contamination study of Brown et al. 2020 (appendix C; from memory). */
  ngram: field(num({ integer: true, min: 1, max: 64 }), { default: 13 }),
  action: field(str({ oneOf: ["drop", "mark"] as const }), { default: "drop" as "drop" | "mark" }),
  /** Unicode form applied to both sides before lower-casing and cutting words. */
  form: field(str({ oneOf: WORD_FORMS }), { default: "NFKC" as WordForm }),
  /**
   * A protected n-gram found in more than this many checked training records is ignored: a phrase
   * that many documents share is the format's boilerplate, not a leaked answer. Off by default,
   * because a test set copied into many documents is the worst leak of all; the warning names the n-grams.
   */
  boilerplate_docs: field(num({ integer: true, min: 1 })),
  /** Above this share of checked training records removed, the run warns (and the summary says so). */
  warn_share: field(num({ min: 0, max: 1 }), { default: 0.05 }),
});
export type DecontaminateOptions = Infer<typeof decontaminateOptions>;

export interface Contamination {
  /** The first shared n-gram, as normalized words joined by single spaces. */
  ngram: string;
  /** The protected file it comes from (relative to the pipeline file). */
  file: string;
}

/** A protected n-gram of a record: its 64-bit hash as 16 hex digits, its words, its file's index. */
type Hit = [key: string, ngram: string, file: number];

const hex8 = (x: number) => x.toString(16).padStart(8, "0");

/** The distinct protected n-grams of `text`, in order of first occurrence. */
export function protectedNgrams(text: string, form: WordForm, hasher: NgramHasher, grams: { get(hi: number, lo: number): number }): { hits: Hit[]; hi: number[]; lo: number[] } {
  const words = wordsOf(text, form);
  const count = hasher.hash(words);
  const seen = new Set<string>();
  const out = { hits: [] as Hit[], hi: [] as number[], lo: [] as number[] };
  for (let i = 0; i < count; i++) {
    const hi = hasher.hi[i];
    const lo = hasher.lo[i];
    const f = grams.get(hi, lo);
    if (f < 0) continue;
    const key = hex8(hi) + hex8(lo);
    if (seen.has(key)) continue;
    seen.add(key);
    out.hits.push([key, words.slice(i, i + hasher.n).join(" "), f]);
    out.hi.push(hi);
    out.lo.push(lo);
  }
  return out;
}

// Only training text is checked: held-out splits are for evaluation and keep whatever they hold.
// Records without a split are training records, which is also why this stage belongs after split.
const checks = (split: string | undefined) => split === undefined || split === "train";

/** One line of a unit's matches file: a checked record with protected n-grams. */
interface MatchLine {
  i: number;
  id: string;
  source: string;
  g: Hit[];
}

export const decontaminateForm: KeyedForm<DecontaminateOptions> = {
  kind: "keyed",
  steps: { partition: "protected-ngrams", resolve: "decontaminate" },
  async collectors(o, env) {
    const set = await loadProtected(o.against, env.baseDir, o.ngram, o.form, "decontaminate");
    env.log.info({ stage: "decontaminate", files: set.files.length, distinct_ngrams: set.grams.size, bytes: set.grams.bytes }, "protected n-grams loaded");
    const hasher = new NgramHasher(o.ngram);
    return {
      async unit(_u, out) {
        let checked = 0;
        const parts: number[][] = Array.from({ length: out.partitions }, () => []);
        return {
          async add(r) {
            if (!checks(r.split)) return;
            checked++;
            const { hits, hi, lo } = protectedNgrams(r.text, o.form, hasher, set.grams);
            if (hits.length === 0) return;
            for (let k = 0; k < hi.length; k++) parts[lo[k] % out.partitions].push(hi[k], lo[k]);
            const line: MatchLine = { i: r.seq, id: r.id, source: r.source, g: hits };
            await out.own("matches.jsonl").write(JSON.stringify(line) + "\n");
          },
          async finish() {
            // (hi, lo) once per record holding the n-gram, so a partition's sum is a record count.
            for (let p = 0; p < out.partitions; p++) if (parts[p].length) await out.part("keys.bin", p).write(new Uint8Array(Uint32Array.from(parts[p]).buffer));
            await out.own("checked.txt").write(String(checked));
            env.count("decontaminate:checked", checked);
          },
        };
      },
      async close() {},
    };
  },
  async partition(_o, p, files, out) {
    const records = new Map<string, number>();
    for (let u = 0; u < files.units; u++) {
      const raw = await files.read("keys.bin", u, p);
      const w = new Uint32Array(raw.buffer.slice(raw.byteOffset, raw.byteOffset + raw.byteLength));
      for (let x = 0; x < w.length; x += 2) {
        const key = hex8(w[x]) + hex8(w[x + 1]);
        records.set(key, (records.get(key) ?? 0) + 1);
      }
    }
    const lines = [...records].sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)).map(([k, n]) => `${k} ${n}\n`);
    await out.share("records.txt", lines.join(""));
  },
  async resolve(o, files, out, ctx) {
    const records = new Map<string, number>();
    for (let p = 0; p < files.partitions; p++) {
      for (const line of (await files.shared("records.txt", p)).toString("utf8").split("\n")) {
        if (line === "") continue;
        const [k, n] = line.split(" ");
        records.set(k, Number(n));
      }
    }
    const ignored = (key: string) => o.boilerplate_docs !== undefined && (records.get(key) ?? 0) > o.boilerplate_docs;
    const set = await loadProtected(o.against, ctx.baseDir, o.ngram, o.form, "decontaminate");
    for (const f of set.files)
      if (f.short_passages > 0) ctx.log.warn({ stage: "decontaminate", file: f.path, short_passages: f.short_passages, ngram: o.ngram }, "protected passages shorter than one n-gram cannot be matched");
    const words = new Map<string, string>();
    const matches: DecontaminateReport["matches"] = [];
    let checked = 0;
    let matched = 0;
    let boilerplateOnly = 0;
    for (let u = 0; u < files.units; u++) {
      checked += Number((await files.read("checked.txt", u)).toString("utf8") || "0");
      for await (const line of files.lines("matches.jsonl", u)) {
        const m = JSON.parse(line) as MatchLine;
        matched++;
        for (const [k, g] of m.g) if (!words.has(k)) words.set(k, g);
        const first = m.g.find(([k]) => !ignored(k));
        if (!first) {
          boilerplateOnly++;
          continue;
        }
        const hit: Contamination = { ngram: first[1], file: set.files[first[2]].path };
        matches.push({ source: m.source, id: m.id, ...hit });
        out.decide(u, m.i, hit);
      }
    }
    const ngrams: NgramCount[] = [...words].map(([k, ngram]) => ({ ngram, records: records.get(k) ?? 0, ...(ignored(k) ? { ignored: true } : {}) }));
    const report = makeReport(o, { files: set.files, distinct_ngrams: set.grams.size, checked, matched, boilerplate_only: boilerplateOnly, ngrams, matches });
    writeFileSync(out.buildFile("decontaminate.json"), JSON.stringify(report, null, 2) + "\n");
    ctx.count("decontaminate:boilerplate_only", boilerplateOnly);
    // Raised where the records are marked; present (as 0) when none is.
    if (o.action === "mark") ctx.count("decontaminate:marked", 0);
    announce(report, ctx.log);
  },
  async applier(o) {
    return (r, d, ctx) => {
      if (d === undefined) return r;
      const hit = d as Contamination;
      if (o.action === "drop") {
        ctx.drop(r, "decontaminated", { ...hit });
        return undefined;
      }
      r.meta.contaminated = hit;
      ctx.count("decontaminate:marked");
      return r;
    };
  },
};

/** What one unit's instance of the `unit` form saw (a JSON value: it travels between phases). */
interface UnitSummary {
  checked: number;
  matches: DecontaminateReport["matches"];
  /** [key, words, records] of every protected n-gram found, in order of first sight. */
  grams: [string, string, number][];
  files: readonly ProtectedFile[];
  distinct_ngrams: number;
}

/** The `unit` form's report from every unit's summary, in input order: written, listed, announced. */
function finishUnits(o: DecontaminateOptions, list: UnitSummary[], ctx: Pick<StageContext, "workDir" | "addOutputFile" | "log">): void {
  const records = new Map<string, NgramCount>();
  for (const u of list)
    for (const [k, ngram, n] of u.grams) {
      const g = records.get(k);
      if (g) g.records += n;
      else records.set(k, { ngram, records: n });
    }
  const matches = list.flatMap((u) => u.matches);
  const checked = list.reduce((a, u) => a + u.checked, 0);
  const report = makeReport(o, { files: list[0].files, distinct_ngrams: list[0].distinct_ngrams, checked, matched: matches.length, boilerplate_only: 0, ngrams: [...records.values()], matches });
  const name = freeName("decontaminate.json", (c) => existsSync(join(ctx.workDir, c)));
  writeFileSync(join(ctx.workDir, name), JSON.stringify(report, null, 2) + "\n");
  ctx.addOutputFile(name);
  announce(report, ctx.log);
}

export default defineStage({
  name: "decontaminate",
  summary: "drops (or marks) training records sharing a word n-gram with protected evaluation texts; place it after split",
  // Text is never changed (records are dropped or get meta.contaminated), so cached token ids stay valid.
  options: decontaminateOptions,
  form: (o) => (o.boilerplate_docs === undefined ? unitForm : decontaminateForm),
  reads: (o, baseDir) => resolveProtected(o.against, baseDir, "decontaminate"),
  async create(o, env) {
    if (o.boilerplate_docs !== undefined) {
      // A protected file that is missing is said before any record is read.
      await resolveProtected(o.against, env.baseDir, "decontaminate");
      return keyedStage(decontaminateForm, o, env?.workers ?? availableParallelism(), env.baseDir);
    }
    const set = await loadProtected(o.against, env.baseDir, o.ngram, o.form, "decontaminate");
    // Said once per instance, not once per input file when it runs per file.
    let told = false;
    return async function* decontaminate(input, ctx) {
      if (!told) {
        told = true;
        for (const f of set.files)
          if (f.short_passages > 0) ctx.log.warn({ stage: "decontaminate", file: f.path, short_passages: f.short_passages, ngram: o.ngram }, "protected passages shorter than one n-gram cannot be matched");
        ctx.log.info({ stage: "decontaminate", files: set.files.length, distinct_ngrams: set.grams.size, bytes: set.grams.bytes }, "protected n-grams loaded");
      }
      const hasher = new NgramHasher(o.ngram);
      const grams = new Map<string, [string, string, number]>();
      const summary: UnitSummary = { checked: 0, matches: [], grams: [], files: set.files, distinct_ngrams: set.grams.size };
      for await (const r of input) {
        if (checks(r.split)) {
          summary.checked++;
          const { hits } = protectedNgrams(r.text, o.form, hasher, set.grams);
          for (const [k, ngram] of hits) {
            const g = grams.get(k);
            if (g) g[2]++;
            else grams.set(k, [k, ngram, 1]);
          }
          if (hits.length > 0) {
            const hit: Contamination = { ngram: hits[0][1], file: set.files[hits[0][2]].path };
            summary.matches.push({ source: r.source, id: r.id, ...hit });
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
      ctx.count("decontaminate:checked", summary.checked);
      summary.grams = [...grams.values()];
      if (env?.perFile && ctx.summarize) ctx.summarize(summary);
      else finishUnits(o, [summary], ctx);
    };
  },
  explain(o) {
    return {
      words: `${o.form === "none" ? "" : o.form + ", "}format characters removed, lower-cased, runs of letters, marks and digits`,
      checks: "records whose split is train (or unset)",
      ...(o.boilerplate_docs !== undefined ? { ignores: `n-grams found in more than ${o.boilerplate_docs} checked training records (boilerplate)` } : {}),
    };
  },
});

/** Without `boilerplate_docs`: decided per unit, the report gathered from every unit's summary. */
const unitForm = {
  kind: "unit" as const,
  async gather(summaries: unknown[], o: DecontaminateOptions, ctx: GatherContext) {
    const list = summaries as UnitSummary[];
    // Without any input file no instance ran: the report still names what the build was checked against.
    if (list.length === 0) {
      const set = await loadProtected(o.against, ctx.baseDir, o.ngram, o.form, "decontaminate");
      list.push({ checked: 0, matches: [], grams: [], files: set.files, distinct_ngrams: set.grams.size });
    }
    finishUnits(o, list, ctx);
  },
};
