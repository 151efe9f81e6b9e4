// The contract every format reader follows: a file path and options in, parsed rows out.

import type { Row } from "./row.js";

export interface ReaderOptions {
  /** Field separator for csv/tsv; one ASCII character. Default ",". */
  delimiter?: string;
  /**
   * Largest line (jsonl), record (csv/tsv) or file (text) held in memory at once, in bytes.
   * Anything longer is quarantined instead of parsed, so one runaway line (a JSON array saved
   * as .jsonl, an unterminated CSV quote) cannot exhaust memory.
   */
  maxRecordBytes?: number;
  /**
   * Only the bytes [start, end) of an uncompressed file (jsonl): a part of a file cut at line
   * boundaries, read as a unit of its own. Line numbers then count from the part's start, and a part
   * without records is not reported as an empty file.
   */
  range?: { start: number; end: number };
}

/** 64 MiB: far beyond any real document, well below V8's string length limit. */
export const DEFAULT_MAX_RECORD_BYTES = 64 * 1024 * 1024;

/** Reads one file lazily; `return()` (breaking out of for-await) closes the file. */
export type Reader = (file: string, options?: ReaderOptions) => AsyncGenerator<Row>;

/** "64 MiB" / "100 bytes", for messages. */
export function formatBytes(n: number): string {
  if (n >= 1024 * 1024 && n % (1024 * 1024) === 0) return `${n / (1024 * 1024)} MiB`;
  if (n >= 1024 && n % 1024 === 0) return `${n / 1024} KiB`;
  return `${n} bytes`;
}
