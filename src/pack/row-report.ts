// One packed row for a person: its pieces decoded to text between boundary lines, or a token-by-token table.
import { segmentRuns } from "./segment-runs.js";
import { positionsOf, targetMaskOf } from "../output/shard-writer.js";
import type { OriginLine } from "./origins.js";

export interface RowInput {
  tokens: Uint32Array;
  segments: Uint32Array;
  decode: (ids: ArrayLike<number>) => string;
  /** The end-of-text id, and whether the build appended it to every document (then a piece without it at its end was cut there). */
  eosId: number;
  eosAppended: boolean;
  /** A row with conversation pieces: 0 where a token is outside its conversation's trained roles (learnFromOrigins). */
  learn?: Uint8Array;
}

/** Opens and closes each run of trained tokens in a conversation piece's decoded text. */
export const TRAINED_OPEN = "⟦";
export const TRAINED_CLOSE = "⟧";

/** The learn mask of a row from its origins' `trained` ranges; undefined when no piece is a conversation. */
export function learnFromOrigins(origins: readonly OriginLine[] | undefined, length: number): Uint8Array | undefined {
  if (!origins?.some((o) => o.trained)) return undefined;
  const out = new Uint8Array(length).fill(1);
  for (const o of origins) {
    if (!o.trained) continue;
    out.fill(0, o.start, o.end);
    for (const [a, b] of o.trained) out.fill(1, a, b);
  }
  return out;
}

export interface PieceReport {
  segment: number;
  start: number;
  /** Exclusive. */
  end: number;
  text: string;
  /** Whether the piece's last token is end-of-text; absent for padding. */
  ends_with_eos?: boolean;
}

export interface RowReport {
  length: number;
  pieces: PieceReport[];
  document_tokens: number;
  padding: number;
  targets: number;
}

export function describeRow(r: RowInput): RowReport {
  const target = targetMaskOf(r.segments, r.segments.length, r.learn);
  const pieces: PieceReport[] = segmentRuns(r.segments).map((run) => {
    if (run.segment === 0) return { segment: 0, start: run.start, end: run.end, text: "" };
    const ids = r.tokens.subarray(run.start, run.end);
    const conversation = r.learn !== undefined && r.learn.subarray(run.start, run.end).includes(0);
    const text = conversation ? markedText(r, target, run.start, run.end) : r.decode(ids);
    return { segment: run.segment, start: run.start, end: run.end, text, ends_with_eos: ids[ids.length - 1] === r.eosId };
  });
  const padding = pieces.filter((p) => p.segment === 0).reduce((a, p) => a + p.end - p.start, 0);
  const targets = target.reduce((a, v) => a + v, 0);
  return { length: r.segments.length, pieces, document_tokens: r.segments.length - padding, padding, targets };
}

/** A conversation piece decoded run by run, its target tokens (the ones trained on) between ⟦ and ⟧. */
function markedText(r: RowInput, target: Uint32Array, start: number, end: number): string {
  let out = "";
  for (let i = start; i < end; ) {
    let j = i;
    while (j < end && target[j] === target[i]) j++;
    const text = r.decode(r.tokens.subarray(i, j));
    out += target[i] ? TRAINED_OPEN + text + TRAINED_CLOSE : text;
    i = j;
  }
  return out;
}

/** Where a piece came from, for its boundary line: source, id, file and line, copy, and where in the document it starts if not at 0. */
export function originText(o: OriginLine): string {
  let out = `${o.source} ${JSON.stringify(o.id)} · ${o.file} line ${o.line}`;
  if (o.copy) out += ` · copy ${o.copy + 1} (source weight or mixture)`;
  if (o.offset > 0) out += ` · from the document's token ${o.offset}`;
  return out;
}

/**
 * The decoded row: a boundary line before every piece (segment, token range, whether it was cut at
 * its end, and with `origins` the record it came from), its text indented under it.
 */
export function rowText(report: RowReport, eosAppended: boolean, origins?: readonly OriginLine[]): string {
  const out: string[] = [];
  for (const p of report.pieces) {
    const range = `tokens ${p.start}–${p.end - 1} (${p.end - p.start})`;
    if (p.segment === 0) {
      out.push(`┌─ padding · ${range}`);
      continue;
    }
    const note = !eosAppended ? "" : p.ends_with_eos ? " · ends with end-of-text" : " · no end-of-text at its end: the document was cut here and continues in another block";
    const o = origins?.find((x) => x.segment === p.segment);
    out.push(`┌─ segment ${p.segment} · ${range}${note}`);
    if (o) out.push(`│ ◆ ${originText(o)}`);
    for (const line of p.text.split("\n")) out.push(`│ ${line}`);
  }
  return out.join("\n") + "\n";
}

/** One line per token: index, segment, position, whether it is a target, id, and the token's own text (JSON-quoted, so spaces and newlines show). */
export function rowTable(r: RowInput): string {
  const L = r.segments.length;
  const pos = positionsOf(r.segments, L);
  const target = targetMaskOf(r.segments, L, r.learn);
  const rows: string[][] = [["index", "segment", "position", "target", "id", "token"]];
  for (let i = 0; i < L; i++) {
    const pad = r.segments[i] === 0;
    rows.push([String(i), pad ? "pad" : String(r.segments[i]), pad ? "-" : String(pos[i]), target[i] ? "yes" : "-", String(r.tokens[i]), JSON.stringify(r.decode([r.tokens[i]]))]);
  }
  const widths = rows[0].map((_, c) => Math.max(...rows.map((row) => row[c].length)));
  return rows.map((row) => row.map((v, c) => (c === row.length - 1 ? v : v.padEnd(widths[c]))).join("  ")).join("\n") + "\n";
}
