// What decontamination did, in three sizes: decontaminate.json (every match), the manifest's
// `decontamination` entry (shares and the most frequent n-grams), and the one warning line a run
// prints when too much of train went.
import { existsSync, readFileSync } from "node:fs";
import { join } from "node:path";
import type { ProtectedFile } from "../overlap/protected-set.js";
import type { Logger } from "../types.js";

/** A protected n-gram found in training records, with the number of checked records holding it. */
export interface NgramCount {
  ngram: string;
  records: number;
  /** True when it was found in more than `boilerplate_docs` records and so ignored. */
  ignored?: boolean;
}

/** decontaminate.json. */
export interface DecontaminateReport {
  ngram: number;
  form: string;
  action: "drop" | "mark";
  /** Ignore n-grams found in more than this many checked training records (absent: none ignored). */
  boilerplate_docs?: number;
  warn_share: number;
  files: readonly ProtectedFile[];
  distinct_ngrams: number;
  collision_rate_per_lookup: number;
  /** Training records checked, those sharing any protected n-gram, those dropped (or marked). */
  checked: number;
  matched: number;
  removed: number;
  /** removed / checked. */
  share: number;
  /** Records whose every shared n-gram was ignored as boilerplate: kept. */
  boilerplate_only: number;
  ignored_ngrams: NgramCount[];
  /** Every shared n-gram, most frequent first (ties in byte order of the words). */
  top_ngrams: NgramCount[];
  /** The removed records in input order, each with its first shared n-gram that was not ignored. */
  matches: { source: string; id: string; ngram: string; file: string }[];
}

/** How many n-grams the manifest, the run summary and the warning quote. */
export const TOP_QUOTED = 5;

/** Most frequent first, then in code-unit order of the words (a fixed order for any cut of the work). */
export function byFrequency(a: NgramCount, b: NgramCount): number {
  return b.records - a.records || (a.ngram < b.ngram ? -1 : a.ngram > b.ngram ? 1 : 0);
}

/** True when the share removed is above the warning threshold. */
export const aboveWarning = (r: Pick<DecontaminateReport, "share" | "warn_share">) => r.share > r.warn_share;

/** The manifest's `decontamination` entry of one decontaminate stage (read by the run summary and the report). */
export interface DecontaminationEntry {
  file: string;
  action: "drop" | "mark";
  ngram: number;
  checked: number;
  dropped?: number;
  marked?: number;
  share: number;
  warn_share: number;
  above_warning: boolean;
  boilerplate_docs?: number;
  ignored_ngrams?: number;
  boilerplate_only?: number;
  top_ngrams: { ngram: string; records: number; ignored?: boolean }[];
}

/** The manifest's entry for one decontaminate stage (its report file named). */
export function manifestEntry(file: string, r: DecontaminateReport): DecontaminationEntry {
  return {
    file,
    action: r.action,
    ngram: r.ngram,
    checked: r.checked,
    [r.action === "mark" ? "marked" : "dropped"]: r.removed,
    share: r.share,
    warn_share: r.warn_share,
    above_warning: aboveWarning(r),
    ...(r.boilerplate_docs !== undefined ? { boilerplate_docs: r.boilerplate_docs, ignored_ngrams: r.ignored_ngrams.length, boilerplate_only: r.boilerplate_only } : {}),
    top_ngrams: r.top_ngrams.slice(0, TOP_QUOTED),
  };
}

/** The `decontamination` entries of a build directory's decontaminate*.json files, in the order listed; undefined without any. */
export function decontaminationOf(dir: string, files: readonly string[]): DecontaminationEntry[] | undefined {
  const entries = files.filter((f) => /^decontaminate(-\d+)?\.json$/.test(f) && existsSync(join(dir, f))).map((f) => manifestEntry(f, JSON.parse(readFileSync(join(dir, f), "utf8")) as DecontaminateReport));
  return entries.length ? entries : undefined;
}

const pct = (x: number) => `${(100 * x).toFixed(1)} %`;
const quoted = (list: NgramCount[]) => list.map((g) => `"${g.ngram}" (${g.records})`).join(", ");

/** One line: how many checked training records went, and the n-grams behind most of them. */
export function describeRemoval(r: Pick<DecontaminateReport, "action" | "checked" | "removed" | "share" | "top_ngrams">): string {
  const verb = r.action === "mark" ? "marked" : "dropped";
  const top = r.top_ngrams.filter((g) => !g.ignored).slice(0, 3);
  return `${r.removed} of ${r.checked} checked training records ${verb} (${pct(r.share)})${top.length ? `; most frequent shared n-grams (records): ${quoted(top)}` : ""}`;
}

/** The warning a run gives when the share is above `warn_share`. */
export function warningText(r: Pick<DecontaminateReport, "action" | "checked" | "removed" | "share" | "warn_share" | "top_ngrams" | "boilerplate_docs">): string {
  const hint = r.boilerplate_docs === undefined ? "n-grams shared by many training records are usually format boilerplate: set boilerplate_docs on the stage to ignore them" : `lower boilerplate_docs (now ${r.boilerplate_docs}) if these n-grams are boilerplate`;
  return `decontaminate: ${describeRemoval(r)}; above warn_share ${pct(r.warn_share)}. ${hint}, or raise warn_share if this is expected`;
}

/** What either form of the stage found, before it is a report. */
export interface Findings {
  files: readonly ProtectedFile[];
  distinct_ngrams: number;
  checked: number;
  matched: number;
  boilerplate_only: number;
  /** Every protected n-gram found, with its record count (and whether it was ignored), in any order. */
  ngrams: NgramCount[];
  matches: DecontaminateReport["matches"];
}

/** decontaminate.json's content from the options and the findings. */
export function makeReport(o: { ngram: number; form: string; action: "drop" | "mark"; boilerplate_docs?: number; warn_share: number }, f: Findings): DecontaminateReport {
  const counted = [...f.ngrams].sort(byFrequency);
  return {
    ngram: o.ngram,
    form: o.form,
    action: o.action,
    ...(o.boilerplate_docs !== undefined ? { boilerplate_docs: o.boilerplate_docs } : {}),
    warn_share: o.warn_share,
    files: f.files,
    distinct_ngrams: f.distinct_ngrams,
    // A training n-gram is taken for a protected one by hash collision with about this probability per lookup.
    collision_rate_per_lookup: f.distinct_ngrams / 2 ** 64,
    checked: f.checked,
    matched: f.matched,
    removed: f.matches.length,
    share: f.checked === 0 ? 0 : f.matches.length / f.checked,
    boilerplate_only: f.boilerplate_only,
    ignored_ngrams: counted.filter((g) => g.ignored).map(({ ngram, records }) => ({ ngram, records })),
    top_ngrams: counted.slice(0, 20),
    matches: f.matches,
  };
}

/** Says what the stage did: a warning above `warn_share`, else an info line. */
export function announce(r: DecontaminateReport, log: Logger): void {
  const fields = { stage: "decontaminate", checked: r.checked, removed: r.removed, share: r.share, warn_share: r.warn_share };
  if (aboveWarning(r)) log.warn(fields, warningText(r));
  else log.info(fields, `decontaminate: ${describeRemoval(r)}`);
}
