// Chooses a source's text field, id field and metadata fields from sampled field statistics.
import type { FieldStats, Sample } from "./sample.js";

export interface FieldChoice {
  text: string;
  /** Mean length of the text field over the sampled rows (characters). */
  textMean: number;
  id?: string;
  meta: string[];
  /** Distinct values per meta field in the sample (for split.by hints). */
  metaValues: Record<string, number>;
  /** A field that looks like a page, document, thread or author key whose values repeat: proposed as split.by (and carried in meta). */
  group?: GroupChoice;
}

export interface GroupChoice {
  field: string;
  /** What one value of the field is: "page", "document", "thread", "author". */
  noun: string;
  /** Distinct values in the sample, and rows per value on average. */
  values: number;
  perValue: number;
}

/**
 * Words that name what a group of records is, by kind: the things a text is cut from first (a
 * document is the usual unit of leakage between splits), then conversations, then who wrote it.
 * Matched against the field name's words ("page", "page_name", "pageName", "doc_id", "author-key").
 */
const GROUP_WORDS: [noun: string, words: string[]][] = [
  ["page", ["page", "pages"]],
  ["document", ["doc", "docs", "document", "documents", "article", "book", "manual", "file", "filename", "url", "uri"]],
  ["thread", ["thread", "conversation", "dialog", "dialogue", "discussion"]],
  ["author", ["author", "authors", "writer", "creator", "user", "username"]],
];
/** Words a group key may end in after the group word: "page_name", "doc_id", "author_key". */
const GROUP_SUFFIXES = new Set(["name", "id", "key", "ref", "url", "path", "no", "number"]);
/** Longest mean value that still looks like a key rather than text. */
const GROUP_MAX_MEAN_CHARS = 200;

/** The words of a field name, lower-cased: "pageName" → [page, name], "doc-id" → [doc, id]. */
function nameWords(name: string): string[] {
  return name
    .replace(/([a-z0-9])([A-Z])/g, "$1 $2")
    .toLowerCase()
    .split(/[^a-z0-9]+/)
    .filter(Boolean);
}

/** The noun of a field named like a group key, or undefined. */
export function groupNoun(name: string): string | undefined {
  const [first, ...rest] = nameWords(name);
  if (first === undefined || !rest.every((w) => GROUP_SUFFIXES.has(w))) return undefined;
  return GROUP_WORDS.find(([, words]) => words.includes(first))?.[0];
}

/**
 * A group key: named like one (groupNoun), present and scalar in at least half the rows, short,
 * with at least two values and values that repeat in the sample (a key held by one row only groups
 * nothing). Kinds in GROUP_WORDS order, then file order.
 */
function chooseGroup(fields: FieldStats[], rows: number): GroupChoice | undefined {
  const found = fields
    .map((f) => ({ f, noun: groupNoun(f.name) }))
    .filter(({ f, noun }) => noun !== undefined && f.scalars >= rows / 2 && f.scalars === f.present && !f.manyValues)
    .filter(({ f }) => f.strings === 0 || f.chars / f.strings <= GROUP_MAX_MEAN_CHARS)
    .filter(({ f }) => f.distinct.size >= 2 && f.distinct.size < f.present);
  found.sort((a, b) => GROUP_WORDS.findIndex(([n]) => n === a.noun) - GROUP_WORDS.findIndex(([n]) => n === b.noun));
  const best = found[0];
  return best && { field: best.f.name, noun: best.noun!, values: best.f.distinct.size, perValue: best.f.present / best.f.distinct.size };
}

/** Field names that say "identifier": "id", "ticket_id", "note-key", "ticketId". */
const ID_NAME = /(^|[_\-. ])(id|uuid|guid|key)$/i;
const CAMEL_ID = /[a-z0-9](Id|ID|Uuid|Guid|Key)$/;

/** Metadata worth carrying: short values that repeat, so records can be grouped by them. */
const META_MAX_MEAN_CHARS = 40;
const META_MAX_VALUES = 50;
const MAX_META = 6;

/**
 * - text: the string field with the longest mean length over all sampled rows (a missing value
 *   counts as empty, so a long but rare field does not win), among fields that are strings in at
 *   least half the rows;
 * - id: a field present in every row with values unique in the sample, short, without spaces,
 *   named like an identifier, or else made of digits or holding digits; none when nothing fits
 *   (records are then named by file and line);
 * - meta: scalar fields present in at least half the rows, with short values that repeat
 *   (2 to 50 distinct values, at most half as many as rows), in file order, at most six; and the
 *   group key, if any;
 * - group: a field named like a page, document, thread or author key whose values repeat
 *   (chooseGroup): records sharing it belong in one split.
 */
export function chooseFields(s: Sample): FieldChoice | undefined {
  const fields = [...s.fields.values()];
  const rows = Math.max(1, s.rows);
  const textual = fields.filter((f) => f.strings >= rows / 2);
  if (textual.length === 0) return undefined;
  const mean = (f: FieldStats) => f.chars / rows;
  // Ties go to the field met first in the file.
  const text = textual.reduce((best, f) => (mean(f) > mean(best) ? f : best));

  const unique = (f: FieldStats) => f.present === s.rows && s.rows >= 2 && !f.manyValues && f.distinct.size === s.rows && f.scalars === s.rows;
  const short = (f: FieldStats) => f.strings === 0 || f.chars / Math.max(1, f.strings) <= 64;
  const candidates = fields.filter((f) => f !== text && unique(f) && short(f) && f.spaced === 0);
  const id =
    candidates.find((f) => ID_NAME.test(f.name) || CAMEL_ID.test(f.name)) ??
    candidates.find((f) => f.integers === f.present) ??
    candidates.find((f) => f.strings === f.present && [...f.distinct].every((v) => /\d/.test(v)));

  const meta = fields
    .filter((f) => f !== text && f !== id)
    .filter((f) => f.scalars >= rows / 2 && f.scalars === f.present)
    .filter((f) => f.strings === 0 || f.chars / f.strings <= META_MAX_MEAN_CHARS)
    .filter((f) => !f.manyValues && f.distinct.size >= 2 && f.distinct.size <= META_MAX_VALUES && f.distinct.size <= rows / 2)
    .slice(0, MAX_META);
  const group = chooseGroup(
    fields.filter((f) => f !== text && f !== id),
    rows,
  );
  // The group key is carried as meta (split.by reads meta), whatever its number of values.
  if (group && !meta.some((f) => f.name === group.field)) meta.push(s.fields.get(group.field)!);
  return {
    text: text.name,
    textMean: mean(text),
    id: id?.name,
    meta: meta.map((f) => f.name),
    metaValues: Object.fromEntries(meta.map((f) => [f.name, f.distinct.size])),
    ...(group ? { group } : {}),
  };
}
