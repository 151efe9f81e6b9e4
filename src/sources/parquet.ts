// Parquet reader (hyparquet): one row group at a time, each row a record; values made JSON-safe.

import { brotliDecompressSync, gunzipSync } from "node:zlib";
import { stat } from "node:fs/promises";
import { decompress as zstdDecompress } from "fzstd";
import type { Compressors, FileMetaData } from "hyparquet";
import { SiftpackError, describeSystemError } from "../errors.js";
import type { ReaderOptions } from "./reader.js";
import { truncatedRow, type Row } from "./row.js";
import { decodeStrict, firstInvalidUtf8 } from "./utf8.js";

/**
 * Page decompressors beyond hyparquet's built-in Snappy: gzip and Brotli from node:zlib, zstd
 * from fzstd (the codec used for .zst inputs too). LZ4, LZ4_RAW and LZO are not supported; a
 * row group using them is reported as unreadable.
 */
const COMPRESSORS: Compressors = {
  GZIP: (input) => gunzipSync(input),
  BROTLI: (input) => brotliDecompressSync(input),
  ZSTD: (input, outputLength) => zstdDecompress(input, new Uint8Array(outputLength)),
};

/** A string column value that is not valid UTF-8: the row is quarantined, as a bad line would be in JSONL. */
class InvalidText {
  constructor(readonly invalidAt: number) {}
}

/** Strict UTF-8 for string columns (hyparquet would substitute U+FFFD silently). */
const PARSERS = {
  stringFromBytes(bytes: Uint8Array): unknown {
    if (bytes === undefined || bytes === null) return bytes;
    const text = decodeStrict(bytes);
    return text ?? new InvalidText(firstInvalidUtf8(bytes));
  },
};

/**
 * Parquet values as the JSON values a record's fields may hold: 64-bit integers become numbers
 * when exact (ids beyond 2^53 become decimal strings), dates ISO strings, raw bytes base64,
 * lists and structs arrays and objects. An invalid UTF-8 string is returned as InvalidText.
 */
function jsonSafe(v: unknown): unknown {
  if (v === null || v === undefined) return null;
  if (typeof v === "bigint") return Number.isSafeInteger(Number(v)) ? Number(v) : v.toString();
  if (typeof v === "number") return Number.isFinite(v) ? v : null;
  if (typeof v === "string" || typeof v === "boolean") return v;
  if (v instanceof InvalidText) return v;
  if (v instanceof Date) return Number.isNaN(v.getTime()) ? null : v.toISOString();
  if (v instanceof Uint8Array) return Buffer.from(v).toString("base64");
  if (Array.isArray(v) || ArrayBuffer.isView(v)) return Array.from(v as ArrayLike<unknown>, jsonSafe);
  if (typeof v === "object") {
    const out: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(v)) out[k] = jsonSafe(x);
    return out;
  }
  return String(v);
}

function toRow(line: number, raw: Record<string, unknown>): Row {
  const fields: Record<string, unknown> = {};
  for (const [name, value] of Object.entries(raw)) {
    const v = jsonSafe(value);
    if (v instanceof InvalidText) return { line, error: `column "${name}": invalid UTF-8 at byte offset ${v.invalidAt}` };
    fields[name] = v;
  }
  return { line, fields };
}

function message(err: unknown): string {
  const m = err instanceof Error ? err.message : String(err);
  return m.replace(/^parquet /, "");
}

/**
 * Rows of a .parquet file; `line` is the 1-based row number in the file. All columns are read
 * (the source's `text`, `id` and `meta` pick from them), one row group at a time, so memory
 * holds one row group, not the file.
 * - A 0-byte file, or one with no rows, is { line: 0, error: "empty file" }.
 * - A file whose footer cannot be read (cut short, not Parquet) is a truncated row: nothing in it
 *   can be read, and how many rows are lost is unknown.
 * - A row group that cannot be decoded (corrupt page, unsupported codec) is lost; reading goes on
 *   with the next row group, and the file ends with one truncated row that names the first such
 *   group and counts the rows of all of them (the footer says how many each held).
 * maxRecordBytes does not apply: a Parquet page is decoded whole.
 */
export async function* readParquet(file: string, _options: ReaderOptions = {}): AsyncGenerator<Row> {
  let size: number;
  try {
    size = (await stat(file)).size;
  } catch (err) {
    throw new SiftpackError("SP_INPUT_MISSING", `cannot open "${file}": ${describeSystemError(err)}`, { cause: err });
  }
  if (size === 0) {
    yield { line: 0, error: "empty file" };
    return;
  }
  // Loaded here, not with the module: builds without Parquet inputs do not load the package.
  const { asyncBufferFromFile, parquetMetadataAsync, parquetReadObjects } = await import("hyparquet");
  const buffer = await asyncBufferFromFile(file);
  let metadata: FileMetaData;
  try {
    metadata = await parquetMetadataAsync(buffer, { parsers: PARSERS });
  } catch (err) {
    yield truncatedRow(0, { error: `not a readable Parquet file: ${message(err)}`, bytes_read: 0, size });
    return;
  }
  let start = 0;
  let lost: { line: number; error: string; rows: number } | undefined;
  for (let g = 0; g < metadata.row_groups.length; g++) {
    const rows = Number(metadata.row_groups[g].num_rows);
    if (rows === 0) continue;
    let objects: Record<string, unknown>[];
    try {
      objects = await parquetReadObjects({
        file: buffer,
        metadata,
        rowStart: start,
        rowEnd: start + rows,
        compressors: COMPRESSORS,
        parsers: PARSERS,
      });
    } catch (err) {
      if (lost) lost.rows += rows;
      else lost = { line: start + 1, error: `row group ${g + 1} (rows ${start + 1} to ${start + rows}) cannot be read: ${message(err)}`, rows };
      start += rows;
      continue;
    }
    for (let i = 0; i < objects.length; i++) yield toRow(start + i + 1, objects[i]);
    start += rows;
  }
  if (lost) yield truncatedRow(lost.line, { error: lost.error, rows_lost: lost.rows });
  else if (start === 0) yield { line: 0, error: "empty file" };
}
