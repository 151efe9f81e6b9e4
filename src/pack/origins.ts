// The origins index beside each shard (<stem>.origins.jsonl): for every document piece of every row,
// the input record it came from. Written by the shard writer, read by `inspect`.
import { readFile } from "node:fs/promises";
import type { RowPiece } from "./packer.js";
import { targetRanges } from "../chat/layout.js";

/** Where a packed document came from: the record's source, id, input file and line (as in the ledger). */
export interface SegmentOrigin {
  source: string;
  id: string;
  file: string;
  line: number;
  /** For a record repeated by its source's weight or mixture: which copy (1 = the second); absent for the first. */
  copy?: number;
  /** A mixture's part copy: it holds the record's first `part` tokens only. */
  part?: number;
  /** A conversation's token layout (src/chat/layout.ts); not written to the index, which gets `trained` from it. */
  chat?: Uint32Array;
}

/** One line of the index: a piece of row `row` (of its shard), tokens [start, end) with segment id `segment`. */
export interface OriginLine extends SegmentOrigin {
  row: number;
  segment: number;
  start: number;
  end: number;
  /** The piece's first token's offset within its document: 0 unless the document was cut before it. */
  offset: number;
  /** A conversation's piece: the row's token ranges [start, end) of its trained roles (before the segment rule drops each piece's first token). */
  trained?: [number, number][];
}

/**
 * The index lines of one row, in segment order. Key order is fixed here, so the bytes depend only on
 * the rows (JSON lines rather than .npy: ids and file names are strings, and a person can read it).
 */
export function originLines(row: number, segments: Uint16Array | Uint32Array, pieces: readonly RowPiece[]): string {
  let out = "";
  let start = 0;
  for (let k = 0; k < pieces.length; k++) {
    const segment = k + 1;
    if (segments[start] !== segment) throw new Error(`row ${row}: segment ${segment} does not start at ${start} (${pieces.length} document pieces)`);
    const end = runEnd(segments, segment, start);
    const o = pieces[k].doc as SegmentOrigin | undefined;
    if (o === undefined) throw new Error(`row ${row}, segment ${segment}: a document piece without its origin`);
    const line: OriginLine = { row, segment, start, end, offset: pieces[k].offset, source: o.source, id: o.id, file: o.file, line: o.line };
    if (o.copy) line.copy = o.copy;
    if (o.part) line.part = o.part;
    if (o.chat) line.trained = targetRanges(o.chat, pieces[k].offset, end - start).map(([a, b]) => [start + a, start + b]);
    out += JSON.stringify(line) + "\n";
    start = end;
  }
  if (start < segments.length && segments[start] !== 0) throw new Error(`row ${row}: segment ${segments[start]} at ${start} has no document piece`);
  return out;
}

/**
 * Where the run of `segment` that starts at `from` ends. A row's segment ids count up from 1 and its
 * padding (0) comes last, so "nonzero and at most `segment`" holds on the run and before it and on
 * nothing after: a binary search finds the end without reading every token's segment.
 */
function runEnd(segments: ArrayLike<number>, segment: number, from: number): number {
  let lo = from + 1;
  let hi = segments.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    const v = segments[mid];
    if (v !== 0 && v <= segment) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** The index lines of row `row` of a shard's origins file (the whole file is read: it is small beside the shard). */
export async function readOrigins(path: string, row: number): Promise<OriginLine[]> {
  const text = await readFile(path, "utf8");
  const out: OriginLine[] = [];
  let n = 0;
  for (const line of text.split("\n")) {
    n++;
    if (line === "") continue;
    let o: OriginLine;
    try {
      o = JSON.parse(line);
    } catch (err) {
      throw new Error(`line ${n}: not JSON (${(err as Error).message})`);
    }
    if (typeof o?.row !== "number" || typeof o.segment !== "number") throw new Error(`line ${n}: no row and segment`);
    if (o.row === row) out.push(o);
    else if (o.row > row) break;
  }
  return out;
}
