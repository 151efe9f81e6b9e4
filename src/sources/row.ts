// What a format reader yields: one parsed row with its position, the reason it could not be parsed, or
// the news that the file could not be read to its end.

/** A parsed input row. `line` is 1-based: the line (jsonl), data row (csv/tsv, header excluded) or array element (json); 1 for text files. */
export interface GoodRow {
  line: number;
  fields: Record<string, unknown>;
}

/** A row that could not be parsed; it goes to quarantine.jsonl and the ledger. `line` 0 means the whole file (e.g. empty). */
export interface BadRow {
  line: number;
  error: string;
}

/** What is known about input lost to a file that could not be read to its end. */
export interface Truncation {
  /** Why reading stopped, as a user reads it ("corrupt gzip data: unexpected end of file"). */
  error: string;
  /** Bytes of the file consumed (compressed bytes for .gz/.zst) and the file's size, where the reader knows them. */
  bytes_read?: number;
  size?: number;
  /** Rows the format says were lost (Parquet row groups); unknown for line formats. */
  rows_lost?: number;
}

/**
 * The file could not be read to its end (a cut or corrupt .gz/.zst, an unreadable Parquet row group
 * or footer, a read error). At most one per file, always its last row. It is not a record: it does
 * not count as a row read. It carries `error` too, so a consumer that knows only good and bad rows
 * (isBad) treats it as a bad one.
 */
export interface TruncatedRow extends BadRow {
  truncated: Truncation;
}

export type Row = GoodRow | BadRow | TruncatedRow;

export function isBad(row: Row): row is BadRow {
  return (row as BadRow).error !== undefined;
}

export function isTruncated(row: Row): row is TruncatedRow {
  return (row as TruncatedRow).truncated !== undefined;
}

/** The truncated row for a failure at `line`: the error text doubles as the row's error. */
export function truncatedRow(line: number, t: Truncation): TruncatedRow {
  return { line, error: t.error, truncated: t };
}
