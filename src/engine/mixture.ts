// The training mixture by token budget: from each source's train tokens (gathered per unit, see
// mixture-tally.ts), the tokens each source is asked for, how many whole repeats it gets and which
// records get one more copy. A pure function of the figures, so every pack task and assemble
// compute the same plan whatever the task count.
import { SiftpackError } from "../errors.js";
import type { MixtureConfig } from "../pipeline/config.js";
import { unitHash } from "../lib/hash.js";

/** Returns from repeated data fall off after about four epochs: Muennighoff et al. 2023, "Scaling Data-Constrained Language Models" (cited from memory). */
export const EPOCH_WARNING = 4;

/** One train record of a source: its rank in the source's seeded order, and its tokens. */
export interface TallyEntry {
  rank: number;
  tokens: number;
}

export interface SourceMixture {
  source: string;
  /** The group the share was asked for, when it was asked for a group. */
  group?: string;
  /** The asked share of the train tokens (a group's share split by the members' tokens available). */
  share: number;
  /** Train tokens and documents available (each document once). */
  tokens_available: number;
  documents: number;
  /** Tokens asked: share × budget. */
  tokens_asked: number;
  /** Whole repeats every record gets; records of rank below `cut` get one more. */
  whole: number;
  cut: number;
  /** The record of rank `rank` (the one that crosses the rest) gets one more copy in part: its first `tokens` tokens. */
  partial?: { rank: number; tokens: number };
  /** Records that get the extra copy, and tokens used in all. */
  extra_documents: number;
  tokens_used: number;
  achieved_share: number;
  /** Tokens used / tokens available: how many times the source is seen. */
  epochs: number;
}

export interface MixturePlan {
  /** The train token budget: asked, or the largest that repeats no source. */
  train_tokens: number;
  budget_from: "asked" | "largest without repetition";
  tokens_used: number;
  max_epochs: number;
  sources: SourceMixture[];
  /** Sources above EPOCH_WARNING epochs, one line each. */
  warnings: string[];
}

/** The salt of the rank draw: apart from the split's and the old weight draw's. */
const RANK_SALT = 0x6d1c;

/** A record's place in its source's seeded order: depends on source, id and seed only. */
export function mixtureRank(source: string, id: string, seed: number): number {
  return unitHash(`${source}\u0000${id}`, (seed ^ RANK_SALT) >>> 0);
}

/** How many times a train record of a source with rank `rank` enters train whole under the plan. */
export function copiesOf(s: SourceMixture, rank: number): number {
  return s.whole + (rank < s.cut ? 1 : 0);
}

/** The tokens of the one part copy a record of rank `rank` gets (its first ones), or 0. */
export function partOf(s: SourceMixture, rank: number): number {
  return s.partial !== undefined && s.partial.rank === rank ? s.partial.tokens : 0;
}

/** A source's train figures, each document once. */
export interface SourceTotals {
  tokens: number;
  documents: number;
}

/** The extra copies of one source: tokens and documents taken, the rank below which records are taken, and the part copy. */
export interface Pick {
  used: number;
  documents: number;
  cut: number;
  partial?: { rank: number; tokens: number };
}

/**
 * The mixture plan from every source's train records held in memory (any order). Throws a
 * SiftpackError with the figures when a source with a share has no train tokens or needs more
 * than max_epochs.
 */
export function planMixture(m: MixtureConfig, sourceNames: string[], tallies: Map<string, TallyEntry[]>, file = "pipeline"): MixturePlan {
  const totals = new Map(sourceNames.map((name) => [name, { tokens: (tallies.get(name) ?? []).reduce((a, e) => a + e.tokens, 0), documents: (tallies.get(name) ?? []).length }]));
  const rests = restsOf(m, sourceNames, totals, file);
  return planFrom(m, sourceNames, totals, rests, new Map(sourceNames.map((name) => [name, pickExtra(tallies.get(name) ?? [], rests.rest.get(name)!)])));
}

/** Whole repeats and the tokens left to take by one more copy, per source; the budget. */
export interface Rests {
  asked: ReturnType<typeof askedTokens>;
  whole: Map<string, number>;
  rest: Map<string, number>;
}

/** The first step of a plan, from the totals alone: the budget, each source's whole repeats and rest; the checks that fail a build. */
export function restsOf(m: MixtureConfig, sourceNames: string[], totals: Map<string, SourceTotals>, file: string): Rests {
  const asked = askedTokens(m, sourceNames, new Map([...totals].map(([k, t]) => [k, t.tokens])));
  if (asked.problems.length) throw new SiftpackError("SP_MIXTURE", `${file}: the mixture cannot be met: ${asked.problems.join("; ")}`);
  const over = asked.sources.filter((f) => f.factor > m.max_epochs);
  if (over.length) throw new SiftpackError("SP_MIXTURE", `${file}: ${overMessage(m, asked.budget, over)}`);
  const whole = new Map<string, number>();
  const rest = new Map<string, number>();
  for (const s of asked.sources) {
    // A factor a rounding error below a whole number is that number.
    const w = Math.floor(s.factor + 1e-12);
    whole.set(s.source, w);
    rest.set(s.source, Math.max(0, s.tokens_asked - w * s.tokens_available));
  }
  return { asked, whole, rest };
}

/**
 * The plan from the totals, the rests and each source's pick. Each source is rounded on its own (no
 * error carried between sources): adding records to one source must not change another's selection
 * while the budget is asked.
 */
export function planFrom(m: MixtureConfig, sourceNames: string[], totals: Map<string, SourceTotals>, r: Rests, picks: Map<string, Pick>): MixturePlan {
  const sources: SourceMixture[] = [];
  for (const p of r.asked.sources) {
    const name = p.source;
    const avail = p.tokens_available;
    const whole = r.whole.get(name)!;
    const pick = picks.get(name)!;
    const used = whole * avail + pick.used;
    sources.push({ source: name, ...(p.group ? { group: p.group } : {}), share: p.share, tokens_available: avail, documents: totals.get(name)?.documents ?? 0, tokens_asked: p.tokens_asked, whole, cut: pick.cut, ...(pick.partial ? { partial: pick.partial } : {}), extra_documents: pick.documents, tokens_used: used, achieved_share: 0, epochs: avail === 0 ? 0 : used / avail });
  }
  const total = sources.reduce((a, s) => a + s.tokens_used, 0);
  for (const s of sources) s.achieved_share = total === 0 ? 0 : s.tokens_used / total;
  const warnings = sources.filter((s) => s.epochs > EPOCH_WARNING).map((s) => `${epochWarning(s.source, s.epochs, "is seen")} in train, more than ${EPOCH_WARNING}: ${REPEAT_FINDING}; give it a smaller share or add data`);
  return { train_tokens: r.asked.budget, budget_from: m.train_tokens !== undefined ? "asked" : "largest without repetition", tokens_used: total, max_epochs: m.max_epochs, sources, warnings };
}

/** The finding behind the epoch warning (cited from memory). */
export const REPEAT_FINDING = 'returns from repeated data fall off after about four epochs (Muennighoff et al. 2023, "Scaling Data-Constrained Language Models")';

/** `source "B" is seen 4.25 times (epochs)`: how often a source is repeated, in a warning's words. */
export function epochWarning(source: string, epochs: number, verb: "is seen" | "would be seen"): string {
  return `source "${source}" ${verb} ${epochs.toFixed(2)} times (epochs)`;
}

/** One source's asked figures: its share, the tokens asked and the factor over its tokens available. */
export interface AskedTokens {
  source: string;
  group?: string;
  share: number;
  tokens_available: number;
  tokens_asked: number;
  factor: number;
}

/**
 * The budget and each source's asked tokens from its tokens available (measured by a build, or
 * estimated by `plan`). A group's share is split among its members by their tokens available, so
 * the members keep their natural proportions and get the same factor. Shares are normalized (the
 * rules allow a sum within 0.001 of 1). Without train_tokens, the budget is the largest that
 * repeats no source: the smallest tokens available / share.
 */
export function askedTokens(m: MixtureConfig, sourceNames: string[], available: Map<string, number>): { budget: number; sources: AskedTokens[]; problems: string[] } {
  const groups = m.groups ?? {};
  const share = new Map<string, { share: number; group?: string }>();
  const problems: string[] = [];
  for (const [key, p] of Object.entries(m.shares)) {
    const members = groups[key] ?? [key];
    const total = members.reduce((a, s) => a + (available.get(s) ?? 0), 0);
    if (p > 0 && total === 0) problems.push(`${key in groups ? "group" : "source"} "${key}" has a share of ${p} but no train tokens`);
    for (const s of members) share.set(s, { share: total === 0 ? 0 : (p * (available.get(s) ?? 0)) / total, group: key in groups ? key : undefined });
  }
  const sum = [...share.values()].reduce((a, s) => a + s.share, 0);
  if (sum > 0) for (const s of share.values()) s.share /= sum;
  let budget = m.train_tokens ?? Infinity;
  if (m.train_tokens === undefined)
    for (const name of sourceNames) {
      const p = share.get(name)?.share ?? 0;
      if (p > 0) budget = Math.min(budget, (available.get(name) ?? 0) / p);
    }
  if (!Number.isFinite(budget)) budget = 0;
  const sources = sourceNames.map((name) => {
    const p = share.get(name) ?? { share: 0 };
    const avail = available.get(name) ?? 0;
    const target = p.share * budget;
    return { source: name, ...(p.group ? { group: p.group } : {}), share: p.share, tokens_available: avail, tokens_asked: target, factor: avail === 0 ? 0 : target / avail };
  });
  return { budget, sources, problems };
}

/** The message of a budget that needs more than max_epochs of some sources, with their figures. */
export function overMessage(m: MixtureConfig, budget: number, over: AskedTokens[]): string {
  return (
    `a train budget of ${Math.round(budget)} tokens needs more than max_epochs ${m.max_epochs} of ${over.map((f) => `"${f.source}"`).join(", ")}: ` +
    over.map((f) => `"${f.source}" has ${f.tokens_available} train tokens for a share of ${+f.share.toFixed(4)} (${Math.round(f.tokens_asked)} tokens), ${f.factor.toFixed(2)} epochs`).join("; ") +
    `; lower mixture.train_tokens or that share, add data, or raise mixture.max_epochs`
  );
}

/**
 * The records that get one more copy: in rank order, whole up to the document whose tokens cross
 * `rest` (rounded to a whole token); that document gets its copy in part, its first tokens up to
 * `rest`, so each source gets exactly its tokens asked and the total is the budget (within half a
 * token per source). Records of equal rank (a 53-bit hash collision) go together and are never cut:
 * such a group is taken or not, whichever is nearer `rest`. `cut` is the rank of the first record
 * not taken whole, or `end` when all are (ranks are below 1); `start` when the list is empty and
 * nothing is taken (the lowest rank the list could hold).
 */
export function pickExtra(entries: TallyEntry[], rest: number, end = 1, start = 0): Pick {
  const sorted = [...entries].sort((a, b) => a.rank - b.rank || a.tokens - b.tokens);
  const target = Math.round(rest);
  // Nothing of these records: the cut is below them all (records of lower ranks, in earlier buckets, stay taken).
  if (target <= 0 || sorted.length === 0) return { used: 0, cut: sorted.length ? sorted[0].rank : start, documents: 0 };
  let cum = 0;
  let i = 0;
  while (i < sorted.length) {
    let j = i;
    let tokens = 0;
    while (j < sorted.length && sorted[j].rank === sorted[i].rank) tokens += sorted[j++].tokens;
    if (cum + tokens >= target) {
      const next = j < sorted.length ? sorted[j].rank : end;
      if (cum + tokens === target) return { used: target, cut: next, documents: j };
      if (j - i === 1) return { used: target, cut: sorted[i].rank, documents: j, partial: { rank: sorted[i].rank, tokens: target - cum } };
      const lo = cum - target;
      const hi = lo + tokens;
      if (Math.abs(hi) < Math.abs(lo)) return { used: cum + tokens, cut: next, documents: j };
      return { used: cum, cut: sorted[i].rank, documents: i };
    }
    cum += tokens;
    i = j;
  }
  return { used: cum, cut: end, documents: sorted.length };
}

/** The manifest's `mixture` entry: the plan's figures without its internal cut ranks, rounded for reading. */
export interface MixtureEntry {
  train_tokens: number;
  budget_from: MixturePlan["budget_from"];
  tokens_used: number;
  max_epochs: number;
  epoch_warning: number;
  sources: {
    source: string;
    group?: string;
    share: number;
    achieved_share: number;
    tokens_available: number;
    documents: number;
    tokens_asked: number;
    tokens_used: number;
    repeats: number;
    extra_documents: number;
    epochs: number;
  }[];
  warnings: string[];
}

export function mixtureEntry(m: MixturePlan): MixtureEntry {
  const r = (x: number, d: number) => Math.round(x * 10 ** d) / 10 ** d;
  return {
    train_tokens: Math.round(m.train_tokens),
    budget_from: m.budget_from,
    tokens_used: m.tokens_used,
    max_epochs: m.max_epochs,
    epoch_warning: EPOCH_WARNING,
    sources: m.sources.map((s) => ({
      source: s.source,
      ...(s.group ? { group: s.group } : {}),
      share: r(s.share, 6),
      achieved_share: r(s.achieved_share, 6),
      tokens_available: s.tokens_available,
      documents: s.documents,
      tokens_asked: Math.round(s.tokens_asked),
      tokens_used: s.tokens_used,
      repeats: s.whole,
      extra_documents: s.extra_documents,
      epochs: r(s.epochs, 4),
    })),
    warnings: m.warnings,
  };
}
