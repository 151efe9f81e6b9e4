// The input formats and the reader for each.

import { readCsv } from "./csv.js";
import { readJson } from "./json.js";
import { readJsonl } from "./jsonl.js";
import { readParquet } from "./parquet.js";
import type { Reader } from "./reader.js";
import { readText } from "./text.js";

export type Format = "jsonl" | "json" | "csv" | "tsv" | "text" | "parquet";

export const FORMATS: readonly Format[] = ["jsonl", "json", "csv", "tsv", "text", "parquet"];

const readTsv: Reader = (file, options = {}) => readCsv(file, { ...options, delimiter: "\t" });

const READERS: Record<Format, Reader> = {
  jsonl: readJsonl,
  json: readJson,
  csv: readCsv,
  tsv: readTsv,
  text: readText,
  parquet: readParquet,
};

export function readerFor(format: Format): Reader {
  const reader = READERS[format];
  if (reader === undefined) throw new TypeError(`unknown input format "${String(format)}"`);
  return reader;
}
