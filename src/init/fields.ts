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
 *   (siftpack then numbers the records);
 * - meta: scalar fields present in at least half the rows, with short values that repeat
 *   (2 to 50 distinct values, at most half as many as rows), in file order, at most six.
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
  return {
    text: text.name,
    textMean: mean(text),
    id: id?.name,
    meta: meta.map((f) => f.name),
    metaValues: Object.fromEntries(meta.map((f) => [f.name, f.distinct.size])),
  };
}
