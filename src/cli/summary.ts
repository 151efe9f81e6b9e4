// Plain-text tables for `run` and `stats`.
import type { Manifest } from "../output/manifest.js";
import type { DecontaminationEntry } from "../stages/decontaminate-report.js";
import type { MixtureEntry } from "../engine/mixture.js";

export function table(rows: (string | number)[][]): string {
  const widths = rows[0].map((_, c) => Math.max(...rows.map((r) => String(r[c]).length)));
  return rows.map((r) => r.map((v, c) => (typeof v === "number" ? String(v).padStart(widths[c]) : String(v).padEnd(widths[c]))).join("  ").trimEnd()).join("\n") + "\n";
}

export function pct(part: number, whole: number): string {
  return whole === 0 ? "0.0%" : `${((100 * part) / whole).toFixed(1)}%`;
}

/**
 * One line per split. `detail` adds how packing cut documents: targets lost to cuts (first tokens
 * of continuation pieces) and continuation tokens (tokens that see only part of their document).
 * Manifests written before those counts existed show "-".
 */
export function splitTable(m: Manifest, opts: { detail?: boolean } = {}): string {
  const head = ["split", "documents", "blocks", "tokens", "targets", "padding", "padding %", "cut docs"];
  if (opts.detail) head.push("lost targets", "continuation");
  const rows: (string | number)[][] = [[...head, "shards"]];
  for (const [name, s] of Object.entries(m.splits)) {
    const row: (string | number)[] = [name, s.documents, s.blocks, s.tokens, s.target_tokens, s.padding_tokens, pct(s.padding_tokens, s.blocks * m.length), s.cut_documents ?? "-"];
    if (opts.detail) row.push(s.targets_lost_to_cuts ?? "-", s.continuation_tokens ?? "-");
    rows.push([...row, s.shards.length]);
  }
  return table(rows);
}

/** Conversations per split (only for a build that has them): turns, tokens per role, the share trained on, cuts and drops. */
export function conversationTable(m: Manifest): string {
  const splits = Object.entries(m.splits).filter(([, s]) => s.conversations);
  if (splits.length === 0) return "";
  const roles = [...new Set(splits.flatMap(([, s]) => Object.keys(s.conversations!.tokens_by_role)))];
  const rows: (string | number)[][] = [["split", "conversations", "turns", "min-max turns", ...roles.map((r) => `${r} tokens`), "trained", "trained %", "cut at turns", "cut anywhere", "left out"]];
  for (const [name, s] of splits) {
    const c = s.conversations!;
    rows.push([name, c.conversations, c.turns, `${c.min_turns}-${c.max_turns}`, ...roles.map((r) => c.tokens_by_role[r] ?? 0), c.trained_tokens, pct(c.trained_tokens, c.tokens), c.cut_at_turns, c.cut_anywhere, c.dropped]);
  }
  return table(rows);
}

/** Document lengths per split in power-of-two buckets, one row per bucket; empty when the manifest has no histograms. */
export function lengthTable(m: Manifest): string {
  const splits = Object.entries(m.splits).filter(([, s]) => Array.isArray(s.length_histogram));
  const mins = [...new Set(splits.flatMap(([, s]) => s.length_histogram.map((b) => b.min)))].sort((a, b) => a - b);
  if (mins.length === 0) return "";
  const rows: (string | number)[][] = [["tokens", ...splits.map(([name]) => name)]];
  for (const min of mins) {
    const label = `${min}–${2 * min - 1}`;
    rows.push([label, ...splits.map(([, s]) => s.length_histogram.find((b) => b.min === min)?.documents ?? 0)]);
  }
  return table(rows);
}

export function recordsLine(m: Manifest): string {
  const r = m.records;
  const reasons = Object.entries(r.by_reason)
    .sort((a, b) => b[1] - a[1])
    .map(([k, v]) => `${k} ${v}`)
    .join(", ");
  // Files read only in part are not records; their count follows (the run's warnings name them).
  const truncated = r.truncated_files ? `; ${r.truncated_files} truncated input file${r.truncated_files === 1 ? "" : "s"}${r.rows_lost ? ` (${r.rows_lost} rows known lost)` : ""}` : "";
  return `records: ${r.read} read, ${r.kept} kept, ${r.dropped} dropped, ${r.quarantined} quarantined${reasons ? ` (${reasons})` : ""}${truncated}\n`;
}

/** Per decontaminate stage: the share of checked training records removed, the n-grams behind it, a warning above its threshold. */
export function decontaminationLines(m: Manifest): string {
  const list = (m.decontamination ?? []) as DecontaminationEntry[];
  let out = "";
  for (const d of list) {
    const removed = d.dropped ?? d.marked ?? 0;
    const verb = d.marked !== undefined ? "marked" : "dropped";
    out += `decontaminate: ${removed} of ${d.checked} checked train records ${verb} (${pct(removed, d.checked)}; every match in ${d.file})\n`;
    // The three most frequent, one a line: a 13-gram is a long line already.
    const top = d.top_ngrams.filter((g) => !g.ignored).slice(0, 3);
    if (top.length && removed > 0) out += `  most frequent shared n-grams, in train records:\n` + top.map((g) => `  ${String(g.records).padStart(7)}  "${g.ngram}"\n`).join("");
    if (d.boilerplate_docs !== undefined) out += `  ignored as boilerplate (in more than ${d.boilerplate_docs} train records): ${d.ignored_ngrams} n-grams; ${d.boilerplate_only} records matched only those and were kept\n`;
    if (d.above_warning)
      out += `WARNING: decontaminate ${verb} more than warn_share ${pct(d.warn_share, 1)} of train. ${d.boilerplate_docs === undefined ? "If the n-grams above are format boilerplate, set boilerplate_docs on the stage" : "If the n-grams above are boilerplate, lower boilerplate_docs"}; if the loss is expected, raise warn_share.\n`;
  }
  return out;
}

/** Filter rules that could not judge some records (no stop-word list for their language, no spaces): they passed them. */
export function skippedRulesLine(m: Manifest): string {
  const byRule = new Map<string, [string, number][]>();
  for (const [k, n] of Object.entries((m.stage_counts ?? {}) as Record<string, number>)) {
    const at = /^filter:skipped:([^:]+):(.+)$/.exec(k);
    if (at && n > 0) byRule.set(at[1], [...(byRule.get(at[1]) ?? []), [at[2], n]]);
  }
  if (byRule.size === 0) return "";
  const rules = [...byRule].map(([rule, whys]) => `${rule} ${whys.reduce((a, [, n]) => a + n, 0)} (${whys.map(([why, n]) => `${why} ${n}`).join(", ")})`);
  return `filter: records a rule could not judge and passed: ${rules.join("; ")}\n`;
}

/** The training mixture: per source the asked and achieved share, the tokens available and used, the epochs; a warning line per source above four epochs. */
export function mixtureLines(m: Manifest): string {
  const x = m.mixture as MixtureEntry | undefined;
  if (!x) return "";
  const budget = x.budget_from === "asked" ? "asked" : "the largest that repeats no source";
  let out = `mixture: train budget ${x.train_tokens} document tokens (${budget}), ${x.tokens_used} used\n`;
  const rows: (string | number)[][] = [["source", "share asked", "achieved", "tokens available", "tokens used", "epochs"]];
  for (const s of x.sources) rows.push([s.group ? `${s.source} (${s.group})` : s.source, pct(s.share, 1), pct(s.achieved_share, 1), s.tokens_available, s.tokens_used, s.epochs.toFixed(2)]);
  out += table(rows).trimEnd().replace(/^/gm, "  ") + "\n";
  for (const w of x.warnings) out += `WARNING: ${w}\n`;
  return out;
}

export function formatSummary(dir: string, m: Manifest): string {
  return (
    `built ${dir}  (${m.tokenizer.name}, blocks of ${m.length} ${m.dtype} tokens, ${m.strategy} packing, build ${m.build_hash})\n` +
    recordsLine(m) +
    skippedRulesLine(m) +
    decontaminationLines(m) +
    mixtureLines(m) +
    splitTable(m) +
    conversationTable(m)
  );
}
