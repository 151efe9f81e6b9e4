// Conversations, for a build that has them: how many per split, their turns, tokens per role, the
// share trained on, and the ones cut at turn edges, cut anywhere or left out.
import type { Manifest } from "../output/manifest.js";
import { esc, fig, pct, table } from "./html.js";

/** The section's HTML, or undefined when no split holds conversations. */
export function conversationsSection(m: Manifest): string | undefined {
  const names = Object.keys(m.splits).filter((s) => m.splits[s].conversations);
  if (names.length === 0) return undefined;
  const roles = [...new Set(names.flatMap((s) => Object.keys(m.splits[s].conversations!.tokens_by_role)))];
  const parts: string[] = [];
  parts.push(
    `<p>Conversations are rendered by the tokenize stage's template; only the roles in <code>train_on</code> (their text and closing marker) are targets. ` +
      `“Trained” counts those tokens as laid out; the target tokens of the blocks also leave out a piece's first token.</p>`,
  );
  parts.push(
    table({
      caption: "Conversations per split",
      head: ["split", "conversations", "turns", "fewest–most turns", "tokens", "trained", "trained share", "cut at turns", "cut anywhere", "left out"],
      rows: names.map((s) => {
        const c = m.splits[s].conversations!;
        const at = (k: string) => ["splits", s, "conversations", k];
        return [
          esc(s),
          fig(at("conversations"), c.conversations),
          fig(at("turns"), c.turns),
          `${fig(at("min_turns"), c.min_turns)}–${fig(at("max_turns"), c.max_turns)}`,
          fig(at("tokens"), c.tokens),
          fig(at("trained_tokens"), c.trained_tokens),
          fig(at("trained_share"), c.trained_share, pct(c.trained_share)),
          fig(at("cut_at_turns"), c.cut_at_turns),
          fig(at("cut_anywhere"), c.cut_anywhere),
          fig(at("dropped"), c.dropped),
        ];
      }),
      numeric: [1, 2, 3, 4, 5, 6, 7, 8, 9],
    }),
  );
  parts.push(
    table({
      caption: "Tokens per role (markers included; template: begin, end, BOS, EOS)",
      head: ["split", ...roles],
      rows: names.map((s) => [esc(s), ...roles.map((r) => fig(["splits", s, "conversations", "tokens_by_role", r], m.splits[s].conversations!.tokens_by_role[r] ?? 0))]),
      numeric: roles.map((_, i) => i + 1),
    }),
  );
  return parts.join("\n");
}
