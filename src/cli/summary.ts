// Plain-text tables for `run` and `stats`.
import type { Manifest } from "../output/manifest.js";

export function table(rows: (string | number)[][]): string {
  const widths = rows[0].map((_, c) => Math.max(...rows.map((r) => String(r[c]).length)));
  return rows.map((r) => r.map((v, c) => (typeof v === "number" ? String(v).padStart(widths[c]) : String(v).padEnd(widths[c]))).join("  ").trimEnd()).join("\n") + "\n";
}

export function pct(part: number, whole: number): string {
  return whole === 0 ? "0.0%" : `${((100 * part) / whole).toFixed(1)}%`;
}

export function splitTable(m: Manifest): string {
  const rows: (string | number)[][] = [["split", "documents", "blocks", "tokens", "targets", "padding", "padding %", "shards"]];
  for (const [name, s] of Object.entries(m.splits)) {
    rows.push([name, s.documents, s.blocks, s.tokens, s.target_tokens, s.padding_tokens, pct(s.padding_tokens, s.blocks * m.length), s.shards.length]);
  }
  return table(rows);
}

export function recordsLine(m: Manifest): string {
  const r = m.records;
  const reasons = Object.entries(r.by_reason)
    .sort((a, b) => b[1] - a[1])
    .map(([k, v]) => `${k} ${v}`)
    .join(", ");
  return `records: ${r.read} read, ${r.kept} kept, ${r.dropped} dropped, ${r.quarantined} quarantined${reasons ? ` (${reasons})` : ""}\n`;
}

export function formatSummary(dir: string, m: Manifest): string {
  return (
    `built ${dir}  (${m.tokenizer.name}, blocks of ${m.length} ${m.dtype} tokens, build ${m.build_hash})\n` +
    recordsLine(m) +
    splitTable(m)
  );
}
