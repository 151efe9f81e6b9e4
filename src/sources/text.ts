// Plain-text reader: the whole file is one document.

import { InputReadError, openInput, readChunks, truncationOf } from "./open.js";
import { DEFAULT_MAX_RECORD_BYTES, formatBytes, type ReaderOptions } from "./reader.js";
import { truncatedRow, type Row } from "./row.js";
import { decodeStrict, firstInvalidUtf8, withoutBom } from "./utf8.js";

function isBlank(bytes: Buffer): boolean {
  for (const b of bytes) if (b !== 0x20 && b !== 0x09 && b !== 0x0a && b !== 0x0d) return false;
  return true;
}

/**
 * One row { line: 1, fields: { text, path } } where `path` is the `file` argument. The file is
 * read whole (up to maxRecordBytes); a leading BOM is dropped, the text is otherwise unchanged.
 * A file with nothing but whitespace (or 0 bytes) is { line: 0, error: "empty file" };
 * invalid UTF-8 or an oversized file is a bad row at line 1; a file that cannot be read to its end
 * (a cut .gz, a disk error) is a truncated row: its one document is lost.
 */
export async function* readText(file: string, options: ReaderOptions = {}): AsyncGenerator<Row> {
  const maxBytes = options.maxRecordBytes ?? DEFAULT_MAX_RECORD_BYTES;
  const input = await openInput(file);
  const parts: Buffer[] = [];
  let size = 0;
  try {
    for await (const chunk of withoutBom(readChunks(input))) {
      size += chunk.length;
      if (size > maxBytes) {
        yield { line: 1, error: `file longer than ${formatBytes(maxBytes)}` };
        return;
      }
      parts.push(chunk);
    }
  } catch (err) {
    if (!(err instanceof InputReadError)) throw err;
    yield truncatedRow(1, truncationOf(err));
    return;
  } finally {
    input.destroy();
  }
  const bytes = Buffer.concat(parts);
  if (isBlank(bytes)) {
    yield { line: 0, error: "empty file" };
    return;
  }
  const text = decodeStrict(bytes);
  if (text === undefined) {
    yield { line: 1, error: `invalid UTF-8 at byte offset ${firstInvalidUtf8(bytes)}` };
    return;
  }
  yield { line: 1, fields: { text, path: file } };
}
