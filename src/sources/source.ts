// A configured source: find its files, read them with the format's reader, and map rows to records.

import { access, lstat, stat } from "node:fs/promises";
import { constants } from "node:fs";
import path from "node:path";
import { glob, isDynamicPattern } from "tinyglobby";
import { SiftpackError, describeSystemError } from "../errors.js";
import { readerFor, type Format } from "./formats.js";
import { compressionOf } from "./open.js";
import { isBad, isTruncated, type Row, type Truncation } from "./row.js";
import { lineLimitBytes } from "./lines.js";
import { kindOf } from "./values.js";
import { turnsOfRow, type TurnFields } from "../chat/turns.js";
import type { Turn } from "../types.js";

export type { Format } from "./formats.js";

export interface SourceSpec {
  name: string;
  /** A glob (or plain path), relative to the pipeline's base directory or absolute. */
  files: string;
  format: Format;
  /** The field holding the document text (ignored for format text: the file is the text). */
  text: string;
  /** The field holding the record id; default ids are defaultId(): "<name>:<file>:<line>" ("<name>:<file>" for text). */
  id?: string;
  /** Fields copied into `meta` (a missing one becomes null). */
  meta: string[];
  /** Mixture weight; applied by the pipeline, not here. */
  weight: number;
  /** Largest line (jsonl), record (csv/tsv) or file (text) in MiB; unset: the readers' 64 MiB. */
  max_line_mb?: number;
  /** Build from what could be read of a file that cannot be read to its end; unset: such a file fails the run. */
  accept_truncated?: boolean;
  /** A conversation source: where each record's turns are (then `text` is not read). */
  turns?: TurnFields;
}

/** A row that could not become a record; `line` 0 means the whole file. */
export interface QuarantineEntry {
  source: string;
  file: string;
  line: number;
  error: string;
}

export interface SourceItem {
  kind: "record";
  id: string;
  source: string;
  text: string;
  meta: Record<string, unknown>;
  origin: { file: string; line: number };
  /** A conversation's turns (see DocRecord.turns). */
  turns?: Turn[];
}

export interface SourceBad {
  kind: "bad";
  entry: QuarantineEntry;
}

/** A file of the source (or the part of it read) could not be read to its end; last of its items, not a record. */
export interface SourceTruncated {
  kind: "truncated";
  source: string;
  file: string;
  /** Rows of the file (of the part, for a part) read before the loss, bad ones included. */
  rows_read: number;
  truncated: Truncation;
}

export type SourceEvent = SourceItem | SourceBad | SourceTruncated;

function byteOrder(a: string, b: string): number {
  return Buffer.compare(Buffer.from(a), Buffer.from(b));
}

function toPosix(p: string): string {
  return p.split(path.sep).join("/");
}

/**
 * The files of a source as paths relative to `baseDir` with forward slashes, in byte order, so
 * outputs do not depend on where the checkout is (an absolute glob gives "../" paths, which
 * path.join(baseDir, file) still resolves). Throws SP_INPUT_MISSING if nothing matches or a
 * file cannot be read, and SP_INPUT_FORMAT for a compression that cannot be read, all before
 * any record is read.
 */
export async function listFiles(spec: Pick<SourceSpec, "name" | "files">, baseDir: string): Promise<string[]> {
  let absolute: string[];
  if (isDynamicPattern(spec.files)) {
    // expandDirectories off: a pattern naming a directory must not silently read everything below it.
    absolute = await glob(spec.files, { cwd: baseDir, absolute: true, expandDirectories: false, onlyFiles: true });
  } else {
    // A plain path is checked directly, so a directory or a dangling link is reported as such
    // rather than as "no file matches" (globbing skips both).
    absolute = [path.resolve(baseDir, spec.files)];
    const exists = await lstat(absolute[0]).then(
      () => true,
      () => false,
    );
    if (!exists) absolute = [];
  }
  if (absolute.length === 0) {
    throw new SiftpackError("SP_INPUT_MISSING", `source "${spec.name}": no file matches "${spec.files}"`);
  }
  const files = absolute.map((f) => toPosix(path.relative(baseDir, f))).sort(byteOrder);
  for (const file of files) {
    const full = path.resolve(baseDir, file);
    try {
      const info = await stat(full);
      if (info.isDirectory()) throw Object.assign(new Error("is a directory"), { code: "EISDIR" });
      await access(full, constants.R_OK);
    } catch (err) {
      throw new SiftpackError("SP_INPUT_MISSING", `source "${spec.name}": cannot read "${file}": ${describeSystemError(err)}`, {
        cause: err,
      });
    }
    try {
      compressionOf(file);
    } catch (err) {
      throw withSource(spec, err);
    }
  }
  return files;
}

/** Prefixes a SiftpackError with the source name; other errors pass unchanged. */
function withSource(spec: Pick<SourceSpec, "name">, err: unknown): unknown {
  if (!(err instanceof SiftpackError) || err.message.startsWith(`source "`)) return err;
  return new SiftpackError(err.code, `source "${spec.name}": ${err.message}`, { cause: err, details: err.details });
}

function hasField(fields: Record<string, unknown>, name: string): boolean {
  // Own properties only: "constructor" or "toString" must not be found on the prototype.
  return Object.hasOwn(fields, name) && fields[name] !== undefined;
}

/**
 * A record's id when its source names no id field: the source, the file and the record's line or
 * row in that file ("manuals:tram-doors.jsonl:12"); a text file is one record, named by its file
 * alone ("pages:brakes/pads.txt"). `idFile` is the file's path below the folder its source's pattern
 * starts from (idFileOf). It depends on the record's own file and place only, so adding, removing or
 * renaming other files never changes it (and so never moves a record to another split); the file and
 * line cannot repeat within a source.
 */
export function defaultId(spec: Pick<SourceSpec, "name" | "format">, idFile: string, line: number): string {
  return spec.format === "text" ? `${spec.name}:${idFile}` : `${spec.name}:${idFile}:${line}`;
}

/** The folder a `files` pattern starts from: its leading path segments without glob syntax (a plain path: its folder). */
function patternBase(pattern: string): string {
  const segments = pattern.split("/");
  if (!isDynamicPattern(pattern)) return segments.slice(0, -1).join("/");
  const fixed: string[] = [];
  for (const seg of segments.slice(0, -1)) {
    if (isDynamicPattern(seg)) break;
    fixed.push(seg.replace(/\\(.)/g, "$1"));
  }
  return fixed.join("/");
}

/**
 * The path of a source's file (relative to `baseDir`, as listFiles gives it) below the folder its
 * pattern starts from: "2026/03.jsonl" for "../data/tickets/{2025,2026}/*.jsonl", "notes.csv" for
 * "../data/notes.csv". Default ids use it rather than the path from the pipeline
 * file, so moving the pipeline file or writing the pattern as an absolute path keeps every id.
 */
export function idFileOf(spec: Pick<SourceSpec, "files">, baseDir: string, file: string): string {
  const base = path.resolve(baseDir, patternBase(spec.files));
  return toPosix(path.relative(base, path.resolve(baseDir, file)));
}

/** Maps rows to records for one source; holds the row counter and the explicit ids seen. */
export class RecordMapper {
  private count = 0;
  private readonly ids = new Set<string>();
  /** Order-independent digest of the explicit ids seen (a sum of their hashes), for cache keys. */
  private idDigest = 0n;

  constructor(private readonly spec: SourceSpec) {}

  /** Rows mapped so far (bad ones included); the last one's row in its unit is `rows - 1`. */
  get rows(): number {
    return this.count;
  }

  /** A value that changes whenever the set of explicit ids seen changes. */
  get idsDigest(): string {
    return this.idDigest.toString(16);
  }

  /** Replays a file read in an earlier run: its rows and the explicit ids it registered. */
  replay(rows: number, ids: Iterable<string>): void {
    this.count += rows;
    if (this.spec.id !== undefined) for (const id of ids) this.register(id);
  }

  private register(id: string): void {
    this.ids.add(id);
    let h = 1469598103934665603n;
    for (let i = 0; i < id.length; i++) h = ((h ^ BigInt(id.charCodeAt(i))) * 1099511628211n) & 0xffffffffffffffffn;
    this.idDigest = (this.idDigest + h) & 0xffffffffffffffffn;
  }

  /**
   * A row as a record or a quarantine entry; a truncated row is not a row (readSourceFile sets it
   * apart) and is refused. `idFile` names the file in default ids (idFileOf; the file itself when not given).
   */
  map(row: Row, file: string, idFile = file): SourceItem | SourceBad {
    if (isTruncated(row)) throw new TypeError("RecordMapper.map: a truncated row is not a row");
    // Every row counts, bad ones too, so a row number does not move when an earlier row breaks or heals.
    this.count++;
    const bad = (error: string): SourceBad => ({ kind: "bad", entry: { source: this.spec.name, file, line: row.line, error } });
    if (isBad(row)) return bad(row.error);
    const { spec } = this;
    // The text reader reports the path it was given (absolute); records carry the portable one.
    const fields = spec.format === "text" ? { ...row.fields, path: file } : row.fields;
    let text: unknown;
    let turns: Turn[] | undefined;
    if (spec.turns && spec.format !== "text") {
      const conv = turnsOfRow(fields, spec.turns);
      if ("error" in conv) return bad(conv.error);
      ({ text, turns } = conv);
    } else {
      const textField = spec.format === "text" ? "text" : spec.text;
      if (!hasField(fields, textField)) return bad(`field "${textField}" is missing`);
      text = fields[textField];
      if (typeof text !== "string") return bad(`field "${textField}" is not a string (got ${kindOf(text)})`);
    }

    // A part of a file numbers its lines from 1; the engine names its records again once the part's place is known (fixFromRead).
    let id = defaultId(spec, idFile, row.line);
    if (spec.id !== undefined) {
      const value = hasField(fields, spec.id) ? fields[spec.id] : null;
      if (value === null) return bad(`id field "${spec.id}" is missing`);
      if (typeof value === "number" && Number.isFinite(value)) id = String(value);
      else if (typeof value === "string") id = value;
      else return bad(`id field "${spec.id}" is not a string or number (got ${kindOf(value)})`);
      if (id === "") return bad(`id field "${spec.id}" is empty`);
      if (this.ids.has(id)) return bad(`duplicate id "${id}"`);
      this.register(id);
    }

    const meta: Record<string, unknown> = {};
    for (const name of spec.meta) meta[name] = hasField(fields, name) ? fields[name] : null;
    const item: SourceItem = { kind: "record", id, source: spec.name, text: text as string, meta, origin: { file, line: row.line } };
    if (turns) item.turns = turns;
    return item;
  }
}

/**
 * Every row of every file of the source, in file order, as a record or a quarantine entry, and a
 * SourceTruncated after the rows of a file that could not be read to its end (a cut .gz). Damage
 * inside a file becomes SourceBad items and reading goes on; only a file that cannot be opened at
 * all throws (a SiftpackError naming the source). Whether a truncation fails the run is the
 * caller's decision (the build engine fails unless the source sets accept_truncated).
 */
export async function* readSource(spec: SourceSpec, baseDir: string): AsyncGenerator<SourceEvent> {
  const files = await listFiles(spec, baseDir);
  const mapper = new RecordMapper(spec);
  for (const file of files) yield* readSourceFile(spec, baseDir, file, mapper);
}

/** The rows of one file of a source; `mapper` carries the row count and the explicit ids across files. */
export async function* readSourceFile(spec: SourceSpec, baseDir: string, file: string, mapper: RecordMapper, range?: { start: number; end: number }): AsyncGenerator<SourceEvent> {
  const read = readerFor(spec.format);
  const idFile = idFileOf(spec, baseDir, file);
  let rows = 0;
  try {
    for await (const row of read(path.resolve(baseDir, file), { range, maxRecordBytes: lineLimitBytes(spec.max_line_mb) })) {
      // Not a row: the row count (and so `seq`) does not move.
      if (isTruncated(row)) yield { kind: "truncated", source: spec.name, file, rows_read: rows, truncated: row.truncated };
      else {
        rows++;
        yield mapper.map(row, file, idFile);
      }
    }
  } catch (err) {
    throw withSource(spec, err);
  }
}
