// The records funnel as data: records read, every drop reason in pipeline order with the stage that gives it, records kept per split.
import type { Manifest } from "../output/manifest.js";

export interface FunnelStep {
  /** The stage that dropped the records ("read" for reading, "other" when no stage claims the reason). */
  stage: string;
  reason: string;
  label: string;
  count: number;
  before: number;
  after: number;
}

export interface Funnel {
  read: number;
  steps: FunnelStep[];
  kept: number;
  splits: { name: string; records: number }[];
  /** Stages of the pipeline that dropped nothing. */
  idle: string[];
}

interface StageEntry {
  name: string;
  options: Record<string, unknown>;
}

export function stagesOf(m: Manifest): StageEntry[] {
  const resolved = m.pipeline?.resolved as { stages?: StageEntry[] } | undefined;
  return Array.isArray(resolved?.stages) ? resolved!.stages : [];
}

/** Words for the ledger's reasons; a reason not listed is shown as written in the ledger. */
export function reasonLabel(reason: string): string {
  const fixed: Record<string, string> = {
    quarantined: "unreadable (quarantined)",
    subsampled: "subsampled by source weight or mixture",
    duplicate: "exact duplicate",
    "near-duplicate": "near-duplicate",
    decontaminated: "overlaps a protected set",
    "no-tokens": "no tokens",
    "language:other": "language not kept",
    "language:uncertain": "language uncertain",
    "strip_repeated_lines:empty": "empty once repeated lines are removed",
  };
  if (fixed[reason]) return fixed[reason];
  if (reason.startsWith("filter:")) return `filter rule ${reason.slice(7)}`;
  return reason;
}

/**
 * Index of the stage that gives `reason`: -1 for reading (unreadable or subsampled records),
 * stages.length when no stage is known to give it (custom stages with their own reasons).
 * A reason "name:detail" belongs to the first stage called "name".
 */
export function stageOfReason(reason: string, stages: StageEntry[]): number {
  if (reason === "quarantined" || reason === "subsampled") return -1;
  const find = (pred: (s: StageEntry) => boolean) => {
    const i = stages.findIndex(pred);
    return i >= 0 ? i : stages.length;
  };
  if (reason === "duplicate") return find((s) => s.name === "dedup" && s.options?.method !== "minhash");
  if (reason === "near-duplicate") return find((s) => s.name === "dedup" && s.options?.method === "minhash");
  if (reason === "decontaminated") return find((s) => s.name === "decontaminate");
  if (reason === "no-tokens") return find((s) => s.name === "tokenize");
  const prefix = reason.includes(":") ? reason.slice(0, reason.indexOf(":")) : reason;
  return find((s) => s.name === prefix);
}

function stageName(i: number, stages: StageEntry[]): string {
  if (i < 0) return "read";
  if (i >= stages.length) return "other";
  const s = stages[i];
  return s.name === "dedup" ? `dedup (${s.options?.method ?? "exact"})` : s.name;
}

export function funnelOf(m: Manifest): Funnel {
  const stages = stagesOf(m);
  const reasons = Object.entries(m.records.by_reason).map(([reason, count]) => ({ reason, count, at: stageOfReason(reason, stages) }));
  // Pipeline order; within a stage the larger drops first, ties by name, so the order is stable.
  reasons.sort((a, b) => a.at - b.at || b.count - a.count || (a.reason < b.reason ? -1 : a.reason > b.reason ? 1 : 0));
  let left = m.records.read;
  const steps: FunnelStep[] = reasons.map((r) => {
    const step = { stage: stageName(r.at, stages), reason: r.reason, label: reasonLabel(r.reason), count: r.count, before: left, after: left - r.count };
    left -= r.count;
    return step;
  });
  const busy = new Set(reasons.filter((r) => r.count > 0).map((r) => r.at));
  const idle = stages.map((_, i) => (busy.has(i) ? "" : stageName(i, stages))).filter(Boolean);
  const order = Object.keys(m.splits);
  const splits = Object.entries(m.records.by_split ?? {})
    .map(([name, records]) => ({ name, records }))
    .sort((a, b) => (order.indexOf(a.name) + 1 || 99) - (order.indexOf(b.name) + 1 || 99));
  return { read: m.records.read, steps, kept: m.records.kept, splits, idle };
}
