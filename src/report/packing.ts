// Packing: how full the blocks are (document tokens, tokens of cut pieces, padding) per split, and one block's attention mask.
import { join } from "node:path";
import type { Manifest } from "../output/manifest.js";
import { readNpyRow } from "../pack/npy-row.js";
import { segmentRuns } from "../pack/segment-runs.js";
import { maskSvg } from "../pack/mask-svg.js";
import { esc, fig, int, note, pct, table } from "./html.js";
import { hbars } from "./hbars.js";

/** Rows looked at when choosing the block to draw: enough to find a busy one, few enough to read in an instant. */
const ROWS_SCANNED = 32;

export interface MaskRow {
  split: string;
  block: number;
  segments: Uint32Array;
  pieces: number;
}

/**
 * The block with the most document pieces among the first rows of the first split's first shard
 * (ties: the lower index): a block with several documents shows what the mask is for. Undefined
 * when there is no block or its shard cannot be read (the report says so instead).
 */
export async function pickMaskRow(dir: string, m: Manifest): Promise<MaskRow | undefined> {
  for (const [split, s] of Object.entries(m.splits)) {
    const shard = s.shards[0];
    if (!shard || shard.blocks === 0) continue;
    let best: MaskRow | undefined;
    for (let row = 0; row < Math.min(shard.blocks, ROWS_SCANNED); row++) {
      const got = await readNpyRow(join(dir, shard.segments), row).catch(() => undefined);
      if (!got || got.values.length !== m.length) return best;
      const pieces = segmentRuns(got.values).filter((r) => r.segment !== 0).length;
      if (!best || pieces > best.pieces) best = { split, block: row, segments: got.values, pieces };
    }
    return best;
  }
  return undefined;
}

export function packingSection(m: Manifest, mask: MaskRow | undefined): string {
  const parts: string[] = [];
  const names = Object.keys(m.splits);
  parts.push(
    `<p>Documents are packed into blocks of ${fig(["length"], m.length)} tokens with the <code>${fig(["strategy"], m.strategy)}</code> strategy. ` +
      `A block's capacity holds whole documents and first pieces, the later pieces of cut documents (which see only their own part), and padding.</p>`,
  );
  const rows = names.map((s) => {
    const x = m.splits[s];
    const continuation = x.continuation_tokens ?? 0;
    return {
      label: s,
      parts: [
        { cls: "s0", label: "documents and first pieces", value: x.tokens - continuation },
        { cls: "s1", label: "later pieces of cut documents", value: continuation, fig: ["splits", s, "continuation_tokens"] },
        { cls: "pad", label: "padding", value: x.padding_tokens, fig: ["splits", s, "padding_tokens"] },
      ],
    };
  });
  parts.push(
    `<figure>${hbars({ title: "Block capacity per split", desc: "For each split, the share of block positions holding whole documents or first pieces, later pieces of cut documents, and padding.", rows, unit: "tokens", shares: true })}` +
      `<figcaption>Share of all block positions (blocks × ${int(m.length)}) per split.</figcaption></figure>`,
  );
  parts.push(
    table({
      caption: "Padding and cuts per split",
      head: ["split", "blocks", "capacity", "padding tokens", "padding", "cut docs", "later-piece tokens", "lost targets", "targets"],
      rows: names.map((s) => {
        const x = m.splits[s];
        const optional = (k: "cut_documents" | "continuation_tokens" | "targets_lost_to_cuts") => (x[k] === undefined ? "–" : fig(["splits", s, k], x[k]));
        return [esc(s), fig(["splits", s, "blocks"], x.blocks), int(x.blocks * m.length), fig(["splits", s, "padding_tokens"], x.padding_tokens), pct(x.padding_tokens / Math.max(1, x.blocks * m.length), 2), optional("cut_documents"), optional("continuation_tokens"), optional("targets_lost_to_cuts"), fig(["splits", s, "target_tokens"], x.target_tokens)];
      }),
      numeric: [1, 2, 3, 4, 5, 6, 7, 8],
    }),
  );
  parts.push(
    `<p class="small">A cut document continues in another block as a new segment: its first token there is not a target (“lost targets”), and its later tokens cannot attend to the part before the cut.</p>`,
  );
  if (mask) {
    const title = `${mask.split} block ${mask.block}: attention mask`;
    // The picture is siftpack's own mask drawing (as `inspect --mask` writes it); its paths are marked as data marks for the checks.
    const svg = maskSvg(mask.segments, { title, maxSide: 320 })
      .svg.replace("<svg ", `<svg class="chart mask" role="img" aria-label="${esc(`${title}: ${mask.pieces} document pieces, one triangle each`)}" `)
      .replace(/<path d=/g, '<path class="mark" d=');
    parts.push(
      `<figure class="picture">${svg}<figcaption>One block of ${esc(mask.split)} (the busiest of its first ${Math.min(ROWS_SCANNED, m.splits[mask.split].shards[0].blocks)}): token i (row) may attend to token j (column) where the square is filled. ` +
        `<code>siftpack inspect DIR --split ${esc(mask.split)} --block ${mask.block}</code> prints its text.</figcaption></figure>`,
    );
  } else parts.push(note("No block could be read to draw an attention mask (the splits are empty or the shards are missing)."));
  return parts.join("\n");
}
