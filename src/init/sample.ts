// Reads a sample of rows with the project's own readers and keeps, per field, what choosing text, id and metadata needs.
import { readerFor, type Format } from "../sources/formats.js";
import { isBad } from "../sources/row.js";

/** Distinct values remembered per field; beyond this a field counts as "many values". */
const DISTINCT_CAP = 10_000;

export interface FieldStats {
  name: string;
  /** Rows where the field is present and not null. */
  present: number;
  strings: number;
  /** Sum of string lengths (UTF-16 units; the choice compares fields, so the unit does not matter). */
  chars: number;
  /** Integers, or strings holding only digits. */
  integers: number;
  /** Values that are strings, numbers or booleans. */
  scalars: number;
  /** String values with whitespace in them. */
  spaced: number;
  distinct: Set<string>;
  /** More distinct values than DISTINCT_CAP. */
  manyValues: boolean;
  /** Words of each string value (for the filter proposal). */
  words: number[];
}

export interface Sample {
  rows: number;
  bad: number;
  /** The first unreadable rows: file, line, error. */
  errors: string[];
  /** Every file was read to its end within the sample. */
  complete: boolean;
  fields: Map<string, FieldStats>;
}

function stats(name: string): FieldStats {
  return { name, present: 0, strings: 0, chars: 0, integers: 0, scalars: 0, spaced: 0, distinct: new Set(), manyValues: false, words: [] };
}

function add(s: FieldStats, v: unknown): void {
  if (v === null || v === undefined) return;
  s.present++;
  if (typeof v === "string") {
    s.strings++;
    s.chars += v.length;
    if (/^\d+$/.test(v)) s.integers++;
    if (/\s/.test(v)) s.spaced++;
    s.words.push(v.split(/\s+/).filter(Boolean).length);
  } else if (typeof v === "number" && Number.isInteger(v)) s.integers++;
  if (typeof v === "string" || typeof v === "number" || typeof v === "boolean") {
    s.scalars++;
    if (!s.manyValues) {
      s.distinct.add(`${typeof v}:${v}`);
      if (s.distinct.size > DISTINCT_CAP) {
        s.manyValues = true;
        s.distinct.clear();
      }
    }
  }
}

/**
 * Up to `rows` rows from each of `files` (all of one format), in file order. Text files are one
 * document each: their single field "text" is measured like any other.
 */
export async function sampleFiles(files: string[], format: Format, rows: number): Promise<Sample> {
  const out: Sample = { rows: 0, bad: 0, errors: [], complete: true, fields: new Map() };
  const read = readerFor(format);
  for (const file of files) {
    let n = 0;
    for await (const row of read(file)) {
      if (n >= rows) {
        out.complete = false;
        break;
      }
      n++;
      if (isBad(row)) {
        out.bad++;
        if (out.errors.length < 3) out.errors.push(`${file}:${row.line}: ${row.error}`);
        continue;
      }
      out.rows++;
      const fields = format === "text" ? { text: row.fields.text } : row.fields;
      for (const [k, v] of Object.entries(fields)) {
        let s = out.fields.get(k);
        if (!s) out.fields.set(k, (s = stats(k)));
        add(s, v);
      }
    }
  }
  return out;
}
