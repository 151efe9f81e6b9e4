// JSON Lines reader: one object per physical line; each line is decoded and parsed alone so damage stays local.

import { InputReadError, openInput, readChunks, truncationOf } from "./open.js";
import { LineSplitter, type Line } from "./lines.js";
import { DEFAULT_MAX_RECORD_BYTES, formatBytes, type ReaderOptions } from "./reader.js";
import { truncatedRow, type Row } from "./row.js";
import { decodeStrict, firstInvalidUtf8, withoutBom } from "./utf8.js";
import { isJsonObject, kindOf } from "./values.js";

/**
 * Rows of a .jsonl (or .jsonl.gz) file; `line` is the 1-based physical line.
 * Blank lines (only spaces, tabs, CR) are skipped and are not records. A file with no
 * non-blank line at all, including a 0-byte file, yields a single { line: 0, error: "empty file" }.
 * A read failure (a cut or corrupt .gz/.zst, a disk error) yields a truncated row at the line it
 * interrupted and ends the file.
 */
export async function* readJsonl(file: string, options: ReaderOptions = {}): AsyncGenerator<Row> {
  const maxBytes = options.maxRecordBytes ?? DEFAULT_MAX_RECORD_BYTES;
  const input = await openInput(file, options.range);
  const splitter = new LineSplitter(maxBytes);
  let records = 0;
  // A byte order mark can only open the file, not a later part of it.
  const chunks = options.range && options.range.start > 0 ? readChunks(input) : withoutBom(readChunks(input));
  try {
    for await (const chunk of chunks) {
      for (const line of splitter.push(chunk)) {
        const row = parseLine(line, maxBytes);
        if (row !== undefined) {
          records++;
          yield row;
        }
      }
    }
    for (const line of splitter.end()) {
      const row = parseLine(line, maxBytes);
      if (row !== undefined) {
        records++;
        yield row;
      }
    }
  } catch (err) {
    if (!(err instanceof InputReadError)) throw err;
    yield truncatedRow(splitter.current, truncationOf(err));
    return;
  } finally {
    input.destroy();
  }
  if (records === 0 && !options.range) yield { line: 0, error: "empty file" };
}

function isBlank(bytes: Buffer): boolean {
  for (const b of bytes) if (b !== 0x20 && b !== 0x09 && b !== 0x0d) return false;
  return true;
}

function parseLine(line: Line, maxBytes: number): Row | undefined {
  if (line.tooLong) return { line: line.number, error: `line longer than ${formatBytes(maxBytes)}` };
  if (isBlank(line.bytes)) return undefined;
  const text = decodeStrict(line.bytes);
  if (text === undefined) {
    return { line: line.number, error: `invalid UTF-8 at byte offset ${firstInvalidUtf8(line.bytes)}` };
  }
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (err) {
    return { line: line.number, error: `malformed JSON: ${shortenParseError((err as Error).message)}` };
  }
  if (!isJsonObject(value)) return { line: line.number, error: `expected a JSON object, got ${kindOf(value)}` };
  return { line: line.number, fields: value };
}

/**
 * V8 messages sometimes quote the input (`Unexpected token 'x', "<line>" is not valid JSON`), a long
 * one cut short with "..." before or after the quotes (`Unexpected token 'D', "Depot Nord"... is not
 * valid JSON`; both forms seen from Node 20's JSON.parse). The line is already identified by number,
 * so the echo is cut (it would copy input text into quarantine lines) and the rest capped.
 */
export function shortenParseError(message: string): string {
  const cut = message.replace(/, (\.\.\.)?".*"(\.\.\.)? is not valid JSON$/s, "");
  const short = cut.length > 160 ? `${cut.slice(0, 157)}...` : cut;
  return short.charAt(0).toLowerCase() + short.slice(1);
}
