// A conversation's turns on the text side: the record's `text` is its turns' texts joined by "\n",
// and `turns` says each turn's role and length, so every stage that reads text (filters, language,
// dedup, decontaminate, split) sees the words of the conversation without template markers, and the
// stages that change text change each turn on its own (mapTurnTexts) so the turn edges stay exact.
import type { DocRecord, Turn } from "../types.js";
import { kindOf } from "../sources/values.js";

/** The separator between turns in a conversation record's `text`: lines never span two turns. */
export const TURN_SEPARATOR = "\n";

/** The texts of a record's turns, cut out of its `text` by their lengths. */
export function turnTexts(r: Pick<DocRecord, "text" | "turns">): string[] {
  const out: string[] = [];
  let at = 0;
  for (const t of r.turns ?? []) {
    out.push(r.text.slice(at, at + t.chars));
    at += t.chars + TURN_SEPARATOR.length;
  }
  return out;
}

/** Sets `text` and the turns' lengths from new turn texts (same count and order). */
export function setTurnTexts(r: Pick<DocRecord, "text" | "turns">, texts: string[]): void {
  const turns = r.turns!;
  r.turns = turns.map((t, i) => ({ role: t.role, chars: texts[i].length }));
  r.text = texts.join(TURN_SEPARATOR);
}

/**
 * Applies a text change to a record: to its text, or to each turn of a conversation on its own.
 * Returns what `fn` returned for each piece (one for a plain record).
 */
export function mapTurnTexts<T>(r: Pick<DocRecord, "text" | "turns">, fn: (text: string) => { text: string; extra: T }): T[] {
  if (!r.turns) {
    const { text, extra } = fn(r.text);
    r.text = text;
    return [extra];
  }
  const results = turnTexts(r).map(fn);
  setTurnTexts(r, results.map((x) => x.text));
  return results.map((x) => x.extra);
}

/** Where a source finds the turns of a record: the list field, and the role and text fields of each turn. */
export interface TurnFields {
  field: string;
  role: string;
  text: string;
  roles: string[];
}

/** The turns of a row as a conversation record's text and turns, or what is wrong with them (for the quarantine file). */
export function turnsOfRow(fields: Record<string, unknown>, spec: TurnFields): { text: string; turns: Turn[] } | { error: string } {
  if (!Object.hasOwn(fields, spec.field) || fields[spec.field] === undefined) return { error: `field "${spec.field}" is missing` };
  const list = fields[spec.field];
  if (!Array.isArray(list)) return { error: `field "${spec.field}" is not a list of turns (got ${kindOf(list)})` };
  if (list.length === 0) return { error: `field "${spec.field}" is an empty list of turns` };
  const texts: string[] = [];
  const turns: Turn[] = [];
  for (let i = 0; i < list.length; i++) {
    const t = list[i];
    const where = `turn ${i + 1} of "${spec.field}"`;
    if (t === null || typeof t !== "object" || Array.isArray(t)) return { error: `${where} is not a mapping (got ${kindOf(t)})` };
    const o = t as Record<string, unknown>;
    const role = Object.hasOwn(o, spec.role) ? o[spec.role] : undefined;
    if (role === undefined || role === null) return { error: `${where} has no "${spec.role}"` };
    if (typeof role !== "string") return { error: `${where}: "${spec.role}" is not a string (got ${kindOf(role)})` };
    if (!spec.roles.includes(role)) return { error: `${where}: unknown role "${role}" (the source's roles are ${spec.roles.join(", ")})` };
    const text = Object.hasOwn(o, spec.text) ? o[spec.text] : undefined;
    if (text === undefined || text === null) return { error: `${where} has no "${spec.text}"` };
    if (typeof text !== "string") return { error: `${where}: "${spec.text}" is not a string (got ${kindOf(text)})` };
    if (text.trim() === "") return { error: `${where} has empty "${spec.text}"` };
    texts.push(text);
    turns.push({ role, chars: text.length });
  }
  return { text: texts.join(TURN_SEPARATOR), turns };
}
