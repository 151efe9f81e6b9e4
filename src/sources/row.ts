// What a format reader yields: one parsed row with its position, or the reason it could not be parsed.

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

export type Row = GoodRow | BadRow;

export function isBad(row: Row): row is BadRow {
  return (row as BadRow).error !== undefined;
}
