// The origins index beside each shard (<stem>.origins.jsonl): for every document piece of every row,
// the input record it came from. Written by the shard writer, read by `inspect`.
import { readFile } from "node:fs/promises";
import type { RowPiece } from "./packer.js";
import { segmentRuns } from "./segment-runs.js";

/** Where a packed document came from: the record's source, id, input file and line (as in the ledger). */
export interface SegmentOrigin {
  source: string;
  id: string;
  file: string;
  line: number;
  /** For a record repeated by its source's weight: which copy (1 = the second); absent for the first. */
  copy?: number;
}

/** One line of the index: a piece of row `row` (of its shard), tokens [start, end) with segment id `segment`. */
export interface OriginLine extends SegmentOrigin {
  row: number;
  segment: number;
  start: number;
  end: number;
  /** The piece's first token's offset within its document: 0 unless the document was cut before it. */
  offset: number;
}

/**
 * The index lines of one row, in segment order. Key order is fixed here, so the bytes depend only on
 * the rows (JSON lines rather than .npy: ids and file names are strings, and a person can read it).
 */
export function originLines(row: number, segments: Uint32Array, pieces: readonly RowPiece[]): string {
  const runs = segmentRuns(segments).filter((r) => r.segment !== 0);
  if (runs.length !== pieces.length) throw new Error(`row ${row}: ${runs.length} segments but ${pieces.length} document pieces`);
  let out = "";
  for (let k = 0; k < runs.length; k++) {
    const o = pieces[k].doc as SegmentOrigin | undefined;
    if (o === undefined) throw new Error(`row ${row}, segment ${runs[k].segment}: a document piece without its origin`);
    const line: OriginLine = { row, segment: runs[k].segment, start: runs[k].start, end: runs[k].end, offset: pieces[k].offset, source: o.source, id: o.id, file: o.file, line: o.line };
    if (o.copy) line.copy = o.copy;
    out += JSON.stringify(line) + "\n";
  }
  return out;
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
