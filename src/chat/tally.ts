// What packing did with a split's conversations, for the manifest: counted once per conversation
// (not per copy or piece), and summed over packing groups by mergeConversationStats.
import { turnSpans } from "./layout.js";

/** Tokens before the first turn and after the last (template begin and end, BOS, EOS). */
export const TEMPLATE_ROLE = "(template)";

export interface ConversationStats {
  /** Conversations packed (copies of a repeated one count once). */
  conversations: number;
  /** Conversations longer than the block, cut at turn edges (long_conversations: at_turns). */
  cut_at_turns: number;
  /** Conversations cut without regard to turns (long_conversations: anywhere, or strategy concat). */
  cut_anywhere: number;
  /** Conversations left out because they did not fit (see the ledger's reasons). */
  dropped: number;
  /** Turns in all conversations, and the fewest and most in one. */
  turns: number;
  min_turns: number;
  max_turns: number;
  /** Tokens of each role's turns (markers included); template: begin, end, BOS, EOS. */
  tokens_by_role: Record<string, number>;
  /** Tokens a conversation trains on as laid out (the roles in train_on, with their closing markers), before packing rules. */
  trained_tokens: number;
  /** Tokens of the conversations; trained_tokens / tokens. */
  tokens: number;
  trained_share: number;
}

export function emptyConversationStats(): ConversationStats {
  return { conversations: 0, cut_at_turns: 0, cut_anywhere: 0, dropped: 0, turns: 0, min_turns: 0, max_turns: 0, tokens_by_role: {}, trained_tokens: 0, tokens: 0, trained_share: 0 };
}

export class ConversationTally {
  readonly s = emptyConversationStats();
  constructor(private readonly roles: readonly string[]) {}

  /** One conversation as packed: its layout, its length in tokens, and how it was cut (if at all). */
  packed(layout: Uint32Array, length: number, cut: "none" | "at_turns" | "anywhere"): void {
    const s = this.s;
    const spans = turnSpans(layout);
    s.min_turns = s.conversations === 0 ? spans.length : Math.min(s.min_turns, spans.length);
    s.max_turns = Math.max(s.max_turns, spans.length);
    s.conversations++;
    s.turns += spans.length;
    if (cut === "at_turns") s.cut_at_turns++;
    if (cut === "anywhere") s.cut_anywhere++;
    let inTurns = 0;
    for (const t of spans) {
      const role = this.roles[t.role] ?? String(t.role);
      s.tokens_by_role[role] = (s.tokens_by_role[role] ?? 0) + (t.end - t.start);
      inTurns += t.end - t.start;
      s.trained_tokens += t.end - t.learn;
    }
    s.tokens_by_role[TEMPLATE_ROLE] = (s.tokens_by_role[TEMPLATE_ROLE] ?? 0) + (length - inTurns);
    s.tokens += length;
    s.trained_share = share(s.trained_tokens, s.tokens);
  }

  dropped(): void {
    this.s.dropped++;
  }
}

function share(a: number, b: number): number {
  return b === 0 ? 0 : Math.round((a / b) * 1e6) / 1e6;
}

/** Sums the stats of several packing groups. */
export function mergeConversationStats(list: ConversationStats[]): ConversationStats {
  const out = emptyConversationStats();
  for (const s of list) {
    if (s.conversations > 0) {
      out.min_turns = out.conversations === 0 ? s.min_turns : Math.min(out.min_turns, s.min_turns);
      out.max_turns = Math.max(out.max_turns, s.max_turns);
    }
    for (const k of ["conversations", "cut_at_turns", "cut_anywhere", "dropped", "turns", "trained_tokens", "tokens"] as const) out[k] += s[k];
    for (const [r, n] of Object.entries(s.tokens_by_role)) out.tokens_by_role[r] = (out.tokens_by_role[r] ?? 0) + n;
  }
  out.trained_share = share(out.trained_tokens, out.tokens);
  return out;
}
