// CSV/TSV reader: a header row names the fields; every later record is one row, checked field by field.

import { CsvScanner, type RawRecord } from "./csv-scan.js";
import { InputReadError, openInput, readChunks, truncationOf } from "./open.js";
import { DEFAULT_MAX_RECORD_BYTES, type ReaderOptions } from "./reader.js";
import { truncatedRow, type Row } from "./row.js";
import { decodeStrict, withoutBom } from "./utf8.js";

/** Turns raw records into rows once the header is known. A bad header makes the whole file unusable. */
class Table {
  header: string[] | undefined;
  /** Data rows seen so far, good or bad. */
  rows = 0;
  failed = false;

  take(record: RawRecord): Row | undefined {
    const where = `(file line ${record.line})`;
    if (this.header === undefined) return this.takeHeader(record, where);
    const line = ++this.rows;
    if (record.error !== undefined) return { line, error: `${record.error} ${where}` };
    const header = this.header;
    if (record.fields.length !== header.length) {
      return { line, error: `expected ${header.length} fields, got ${record.fields.length} ${where}` };
    }
    const entries: [string, string][] = [];
    for (let k = 0; k < header.length; k++) {
      const value = decodeStrict(record.fields[k]);
      if (value === undefined) return { line, error: `invalid UTF-8 in field "${header[k]}" ${where}` };
      entries.push([header[k], value]);
    }
    // fromEntries defines own properties, so a column named "__proto__" is just a column.
    return { line, fields: Object.fromEntries(entries) };
  }

  private takeHeader(record: RawRecord, where: string): Row | undefined {
    const fail = (error: string): Row => {
      this.failed = true;
      return { line: 0, error: `header row: ${error} ${where}` };
    };
    if (record.error !== undefined) return fail(record.error);
    const names: string[] = [];
    for (const bytes of record.fields) {
      const name = decodeStrict(bytes);
      if (name === undefined) return fail("invalid UTF-8");
      if (names.includes(name)) return fail(`duplicate column name "${name}"`);
      names.push(name);
    }
    this.header = names;
    return undefined;
  }
}

/**
 * Rows of a .csv/.tsv (optionally .gz) file. `line` is the 1-based data row (header excluded);
 * error messages add the physical line the record starts on. All values are strings.
 * - The first non-empty record is the header; a malformed or duplicate-named header yields one
 *   { line: 0 } bad row and nothing else. A header-only file yields nothing and is not an error.
 * - A file with no record at all (0 bytes, or only empty lines) is { line: 0, error: "empty file" }.
 * - Invalid UTF-8 is detected per field on the raw bytes, so only the row holding it is lost.
 * - A read failure (a cut or corrupt .gz/.zst, a disk error) yields a truncated row and ends the file.
 * - tsv uses the same quoting rules with a tab delimiter (spreadsheet exports quote that way).
 */
export async function* readCsv(file: string, options: ReaderOptions = {}): AsyncGenerator<Row> {
  const delimiter = options.delimiter ?? ",";
  if (delimiter.length !== 1 || delimiter.charCodeAt(0) > 0x7f || `"\r\n`.includes(delimiter)) {
    throw new TypeError(`CSV delimiter must be one ASCII character other than a quote or newline, got ${JSON.stringify(delimiter)}`);
  }
  const scanner = new CsvScanner(delimiter.charCodeAt(0), options.maxRecordBytes ?? DEFAULT_MAX_RECORD_BYTES);
  const table = new Table();
  const input = await openInput(file);
  try {
    for await (const chunk of withoutBom(readChunks(input))) {
      for (const record of scanner.push(chunk)) {
        const row = table.take(record);
        if (row !== undefined) yield row;
        if (table.failed) return;
      }
    }
    for (const record of scanner.end()) {
      const row = table.take(record);
      if (row !== undefined) yield row;
    }
  } catch (err) {
    if (!(err instanceof InputReadError)) throw err;
    const line = table.header === undefined ? 0 : table.rows + 1;
    yield truncatedRow(line, truncationOf(err));
    return;
  } finally {
    input.destroy();
  }
  if (table.header === undefined && !table.failed) yield { line: 0, error: "empty file" };
}
