// The record that flows through every stage, and the context stages report to.

/** Where an input record came from: the file and its 1-based line (jsonl, text) or data row (csv, tsv, json array element). */
export interface Origin {
  file: string;
  line: number;
}

/** One turn of a conversation record: its role and the length of its text (UTF-16 units) in the record's `text`. */
export interface Turn {
  role: string;
  chars: number;
}

/** One document. `id` is unique within its source; `seq` is its row in its input file (0-based, bad rows counted): with the file, its place in input order. */
export interface DocRecord {
  id: string;
  source: string;
  text: string;
  meta: Record<string, unknown>;
  origin: Origin;
  seq: number;
  /** Set by the split stage. */
  split?: string;
  /** Set by stages that group near-duplicates. */
  cluster?: string;
  /**
   * A conversation (a source with `turns`): `text` is the turns' texts joined by "\n" and this
   * gives each turn's role and length (src/chat/turns.ts). Absent on every other record.
   */
  turns?: Turn[];
  /** Set by the tokenize stage. */
  tokens?: Uint32Array;
  /**
   * Set by the tokenize stage for a conversation: where its turns and targets fall in `tokens`
   * (src/chat/layout.ts). Absent on every other record.
   */
  chat?: Uint32Array;
  /**
   * Set only where the build engine left the text unread (the pack phase, when nothing there reads
   * it): `text` is then "" and this is the real text's length in UTF-8 bytes.
   */
  textBytes?: number;
  /**
   * Set only where the build engine kept the text as its UTF-8 bytes (the pack phase, when the
   * analyses there take bytes): `text` is then "", `textBytes` its length, and this the text.
   */
  utf8?: Uint8Array;
}

/** What a stage may do besides passing records on: account for the ones it drops. */
export interface StageContext {
  /** The pipeline seed; every random choice derives from it. */
  seed: number;
  /** Record that `record` leaves the pipeline here, with a short stable reason and optional detail. */
  drop(record: DocRecord, reason: string, detail?: Record<string, unknown>): void;
  /** Structured log (pino). */
  log: Logger;
  /** The build directory in progress (a staging directory); a stage may write its own files here. */
  workDir: string;
  /** Lists a file the stage wrote under `workDir` (path relative to it) so the manifest checksums it. */
  addOutputFile(relPath: string): void;
  /** Adds to a named counter reported in the manifest's `stage_counts` (e.g. "redact:email"). */
  count(name: string, n?: number): void;
  /** A per-file instance of a stage with `gather` hands its file's summary here (see StageDefinition.gather). */
  summarize?(value: unknown): void;
}

export interface Logger {
  info(obj: object | string, msg?: string): void;
  warn(obj: object | string, msg?: string): void;
  error(obj: object | string, msg?: string): void;
  debug(obj: object | string, msg?: string): void;
}
