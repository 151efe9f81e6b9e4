// strip_repeated_lines: removes lines that occur in at least `min_docs` records (boilerplate), as a keyed step.
//
// Each unit counts in how many of its records each distinct line occurs (by a 53-bit slice of its
// XXH64) and writes the counts into the partition of the line's key; a partition step sums them over
// all units and shares the keys found in at least `min_docs` records; the next reader of the records
// removes those lines, and drops a record left with no text.
//
// A unit's counts live in a map of at most `max_lines` entries. When it is full, every line seen in
// only one record so far is forgotten (most lines of a corpus are unique, so this frees most of
// the map); if that frees less than a quarter of it, new lines are no longer admitted. Counts
// can therefore only be too low, never too high: a line is removed only if it really occurred
// in at least `min_docs` records (barring a 53-bit hash collision), while some boilerplate may
// survive when the budget is too small. The manifest reports the pruning (stage_counts).
import { mapTurnTexts } from "../chat/turns.js";
import { availableParallelism } from "node:os";
import { defineStage } from "./stage.js";
import { keyedStage, type KeyedForm } from "./keyed.js";
import { field, num, obj, type Infer } from "../pipeline/schema.js";
import { loadHasher, xxh64String } from "../lib/hash.js";
import { SiftpackError } from "../errors.js";
import { codePoints } from "../filter/units.js";

export const stripRepeatedLinesOptions = obj({
  /** A line found in at least this many records is removed from all of them. */
  min_docs: field(num({ integer: true, min: 2 }), { required: true }),
  /** Shorter lines (in characters, trimmed) are never counted or removed: headings and list marks repeat by design. */
  min_chars: field(num({ integer: true, min: 0 }), { default: 0 }),
  /** The budget of distinct lines counted at once (about 100 bytes of memory each). */
  max_lines: field(num({ integer: true, min: 1000 }), { default: 2_000_000 }),
});
export type StripRepeatedLinesOptions = Infer<typeof stripRepeatedLinesOptions>;

/**
 * The key of a line: trimmed (indentation and trailing spaces do not make boilerplate
 * different), hashed; undefined for lines too short to consider (blank lines always).
 */
export function lineKey(line: string, minChars: number): number | undefined {
  const t = line.trim();
  if (t === "" || (minChars > 0 && codePoints(t) < minChars)) return undefined;
  return Number(xxh64String(t) >> 11n);
}

/** Per-line record counts under a fixed budget of entries (see the header for the policy). */
export class LineCounts {
  private readonly counts = new Map<number, number>();
  /** How many times singletons were forgotten, and whether admission has stopped. */
  prunes = 0;
  closed = false;

  constructor(
    private readonly maxLines: number,
    private readonly minChars = 0,
  ) {}

  /** Counts one record: each distinct non-blank line once. */
  addRecord(text: string): void {
    const seen = new Set<number>();
    for (const line of text.split("\n")) {
      const k = lineKey(line, this.minChars);
      if (k === undefined || seen.has(k)) continue;
      seen.add(k);
      const c = this.counts.get(k);
      if (c !== undefined) this.counts.set(k, c + 1);
      else if (!this.closed) {
        if (this.counts.size >= this.maxLines) this.prune();
        if (!this.closed) this.counts.set(k, 1);
      }
    }
  }

  private prune(): void {
    this.prunes++;
    for (const [k, c] of this.counts) if (c === 1) this.counts.delete(k);
    if (this.counts.size > 0.75 * this.maxLines) this.closed = true;
  }

  count(line: string): number {
    const k = lineKey(line, this.minChars);
    return k === undefined ? 0 : (this.counts.get(k) ?? 0);
  }

  get size(): number {
    return this.counts.size;
  }

  /** Every counted line key with its record count. */
  entries(): IterableIterator<[number, number]> {
    return this.counts.entries();
  }
}

/**
 * The text without the lines counted in at least `minDocs` records, and how many lines went.
 * Blank lines on both sides of a removed line merge into one, and blank lines at either end of
 * a changed text are trimmed, so removal leaves no holes.
 */
export function stripLines(text: string, counts: Pick<LineCounts, "count">, minDocs: number): { text: string; removed: number } {
  const lines = text.split("\n");
  const out: string[] = [];
  let removed = 0;
  let gap = false; // a line was removed since the last kept line
  for (const line of lines) {
    if (line.trim() !== "" && counts.count(line) >= minDocs) {
      removed++;
      gap = true;
      continue;
    }
    const blank = line.trim() === "";
    if (blank && gap && out.length > 0 && out[out.length - 1].trim() === "") continue;
    if (!blank) gap = false;
    out.push(line);
  }
  if (removed === 0) return { text, removed };
  while (out.length > 0 && out[0].trim() === "") out.shift();
  while (out.length > 0 && out[out.length - 1].trim() === "") out.pop();
  return { text: out.join("\n"), removed };
}

/** The form: counts per unit by line-key partition, sums per partition, stripping where the records are read next. */
export const stripRepeatedLinesForm: KeyedForm<StripRepeatedLinesOptions> = {
  kind: "keyed",
  steps: { partition: "lines" },
  async collectors(o, env) {
    await loadHasher();
    return {
      async unit(_u, out) {
        const counts = new LineCounts(o.max_lines, o.min_chars);
        return {
          add(r) {
            if (r.tokens) throw new SiftpackError("SP_PIPELINE_KEY", `"strip_repeated_lines" must come before "tokenize"`);
            counts.addRecord(r.text);
          },
          async finish() {
            // (key, records) pairs as float64 (keys are 53-bit), one file per partition.
            const lists: number[][] = Array.from({ length: out.partitions }, () => []);
            for (const [key, n] of counts.entries()) lists[key % out.partitions].push(key, n);
            for (let p = 0; p < out.partitions; p++) if (lists[p].length) await out.part("counts.bin", p).write(new Uint8Array(Float64Array.from(lists[p]).buffer));
            if (counts.prunes > 0) env.count("strip_repeated_lines:budget_prunes", counts.prunes);
            if (counts.closed) env.log.warn({ max_lines: o.max_lines }, "strip_repeated_lines: line budget full; lines first seen later in an input file were not counted");
          },
        };
      },
      async close() {},
    };
  },
  async partition(o, p, files, out, ctx) {
    const sums = new Map<number, number>();
    for (let u = 0; u < files.units; u++) {
      const raw = await files.read("counts.bin", u, p);
      const w = new Float64Array(raw.buffer.slice(raw.byteOffset, raw.byteOffset + raw.byteLength));
      for (let x = 0; x < w.length; x += 2) sums.set(w[x], (sums.get(w[x]) ?? 0) + w[x + 1]);
    }
    const keys: number[] = [];
    for (const [k, n] of sums) if (n >= o.min_docs) keys.push(k);
    keys.sort((a, b) => a - b);
    await out.share("repeated.bin", new Uint8Array(Float64Array.from(keys).buffer));
    ctx.count("strip_repeated_lines:distinct_lines", sums.size);
    // Raised where the records are stripped; present (as 0) even when no line repeats.
    ctx.count("strip_repeated_lines:lines_removed", 0);
    ctx.count("strip_repeated_lines:records_changed", 0);
    ctx.log.debug({ partition: p, distinct_lines: sums.size, repeated_lines: keys.length }, "repeated lines found");
  },
  async applier(o, files) {
    await loadHasher();
    const keys = new Set<number>();
    for (let p = 0; p < files.partitions; p++) {
      const raw = await files.shared("repeated.bin", p);
      for (const k of new Float64Array(raw.buffer.slice(raw.byteOffset, raw.byteOffset + raw.byteLength))) keys.add(k);
    }
    const lookup = {
      count: (line: string) => {
        const k = lineKey(line, o.min_chars);
        return k !== undefined && keys.has(k) ? o.min_docs : 0;
      },
    };
    return (r, _d, ctx) => {
      if (keys.size === 0) return r;
      // A conversation's turns are stripped one by one (its lines never span two turns, so the counts hold).
      const before = r.text;
      const removed = mapTurnTexts(r, (t) => {
        const { text, removed } = stripLines(t, lookup, o.min_docs);
        return { text, extra: removed };
      }).reduce((a, b) => a + b, 0);
      if (removed === 0) {
        r.text = before;
        return r;
      }
      ctx.count("strip_repeated_lines:lines_removed", removed);
      ctx.count("strip_repeated_lines:records_changed");
      const text = r.text;
      if (text.trim() === "") {
        ctx.drop(r, "strip_repeated_lines:empty", { lines_removed: removed });
        return undefined;
      }
      return r;
    };
  },
};

export default defineStage({
  name: "strip_repeated_lines",
  summary: "removes lines that occur in at least min_docs records (counted per input unit, summed per partition of lines)",
  options: stripRepeatedLinesOptions,
  form: stripRepeatedLinesForm,
  create(o: StripRepeatedLinesOptions, env) {
    return keyedStage(stripRepeatedLinesForm, o, env?.workers ?? availableParallelism());
  },
});
