// Public surface of the input readers.

export { readerFor, FORMATS, type Format } from "./formats.js";
export { listFiles, readSource, type SourceSpec, type SourceItem, type SourceBad, type SourceTruncated, type SourceEvent, type QuarantineEntry } from "./source.js";
export { DEFAULT_MAX_RECORD_BYTES, type Reader, type ReaderOptions } from "./reader.js";
export { isBad, isTruncated, type Row, type GoodRow, type BadRow, type TruncatedRow, type Truncation } from "./row.js";
export { readJsonl } from "./jsonl.js";
export { readJson } from "./json.js";
export { readCsv } from "./csv.js";
export { readText } from "./text.js";
export { openInput, compressionOf } from "./open.js";
