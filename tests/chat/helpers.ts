// Test helpers: an encoder with one token per character (id = the character's code) and three special
// tokens, so ids can be written out by hand; a template compiled through the real schema; packing
// with the real packers and the shard writer's mask.
import { CompiledTemplate, templateSchema, type ChatTemplate } from "../../src/chat/template.js";
import { createPacker, type PackOptions } from "../../src/stages/pack.js";
import { learnOfRow, positionsOf, targetMaskOf } from "../../src/output/shard-writer.js";
import { TokenBuffer, type Encoder } from "../../src/tokenizer/index.js";
import type { Issue } from "../../src/pipeline/schema.js";
import type { CutEdges, RowPiece } from "../../src/pack/packer.js";
import type { Turn } from "../../src/types.js";
import { longestUncut, questionEdges, turnEdges } from "../../src/chat/layout.js";

export const EOS = 0;
export const SPECIALS: Record<string, number> = { "<|endoftext|>": 0, "<|ask|>": 1, "<|answer|>": 2 };

export function charEncoder(): Encoder {
  const byId = new Map(Object.entries(SPECIALS).map(([k, v]) => [v, k]));
  return {
    name: "chars",
    vocabSize: 0x10000,
    specialTokens: SPECIALS,
    eosId: EOS,
    encode: (text) => [...text].map((c) => c.charCodeAt(0)),
    encodeInto(text, out) {
      for (let i = 0; i < text.length; i++) out.push(text.charCodeAt(i));
      return text.length;
    },
    decode: (ids) => Array.from(ids, (id) => byId.get(id) ?? String.fromCharCode(id)).join(""),
  };
}

export function template(given: Record<string, unknown>): ChatTemplate {
  const issues: Issue[] = [];
  const t = templateSchema.check(given, ["template"], issues);
  if (issues.length > 0) throw new Error(issues.map((i) => `${i.path.join(".")}: ${i.message}`).join("; "));
  return t;
}

/** A conversation as a record's text and turns. */
export function conversation(turns: [string, string][]): { text: string; turns: Turn[] } {
  return { text: turns.map(([, t]) => t).join("\n"), turns: turns.map(([role, t]) => ({ role, chars: t.length })) };
}

export interface PackedRow {
  tokens: number[];
  segments: number[];
  positions: number[];
  target: number[];
  pieces: { doc: number; offset: number }[];
}

/** Each conversation's ids and layout. */
export function encodeAll(t: ChatTemplate, convs: { text: string; turns: Turn[] }[]): { tokens: Uint32Array; layout: Uint32Array }[] {
  const enc = charEncoder();
  const c = new CompiledTemplate(t);
  return convs.map((x) => c.encode(enc, x, false, false, new TokenBuffer()));
}

/** Encodes each conversation, packs them as the pack phase does (turn edges when longer than a block), and gives each row with its target mask. */
export function packConversations(t: ChatTemplate, convs: { text: string; turns: Turn[] }[], o: PackOptions): { rows: PackedRow[]; docs: { tokens: Uint32Array; layout: Uint32Array }[] } {
  const docs = encodeAll(t, convs);
  const rows: PackedRow[] = [];
  const L = o.length;
  const sink = (tokens: Uint32Array, segments: Uint32Array, pieces: readonly RowPiece[]) => {
    const learn = new Uint8Array(L);
    learnOfRow(segments, pieces, learn);
    rows.push({
      tokens: [...tokens],
      segments: [...segments],
      positions: [...positionsOf(segments, L)],
      target: [...targetMaskOf(segments, L, learn)],
      pieces: pieces.map((p) => ({ doc: (p.doc as { n: number }).n, offset: p.offset })),
    });
  };
  const p = createPacker(o, EOS, sink, { seed: 1, split: "train" });
  docs.forEach((d, n) => p.add(d.tokens, { n, chat: d.layout }, edgesFor(d, L)));
  p.finish();
  return { rows, docs };
}

function edgesFor(d: { tokens: Uint32Array; layout: Uint32Array }, L: number): CutEdges | undefined {
  if (d.tokens.length <= L) return undefined;
  if (longestUncut(d.layout, d.tokens.length) > L) throw new Error("a turn longer than the block");
  return { at: turnEdges(d.layout), preferred: questionEdges(d.layout) };
}
