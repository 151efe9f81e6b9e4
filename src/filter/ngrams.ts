// N-gram repetition rules: the share of characters in the most frequent n-gram, and in duplicated n-grams.
import type { Issue, Path, Schema } from "../pipeline/schema.js";
import { codePoints, type DocView } from "./units.js";
import { round, type Rule } from "./rule.js";

/** Limits per n-gram size: n (written as a number key) → the largest share of characters allowed. */
export type NgramLimits = Record<string, number>;

/** A mapping from n-gram size (1 to 50) to a share from 0 to 1; keys left out keep their defaults. */
function ngramLimits(): Schema<Partial<NgramLimits>> {
  const describe = "a mapping from n-gram size (an integer from 1 to 50) to a share from 0 to 1";
  return {
    describe,
    check(value: unknown, path: Path, issues: Issue[]) {
      const out: NgramLimits = {};
      if (value === null || typeof value !== "object" || Array.isArray(value)) {
        issues.push({ path, message: `expected ${describe}` });
        return out;
      }
      for (const [k, v] of Object.entries(value as Record<string, unknown>)) {
        const n = Number(k);
        if (!/^\d+$/.test(k) || n < 1 || n > 50) issues.push({ path: [...path, k], atKey: true, message: `"${k}" is not an n-gram size (an integer from 1 to 50)` });
        else if (typeof v !== "number" || !(v >= 0 && v <= 1)) issues.push({ path: [...path, k], message: `expected a share from 0 to 1, got ${JSON.stringify(v)}` });
        else out[String(n)] = v;
      }
      return out;
    },
  };
}

/**
 * Exact ids for pairs of ids: an open-addressing table over typed arrays (keys stored, so no
 * collisions change a result), several times faster than a Map keyed by numbers beyond 2^31.
 * Pair i is (first[i], second[i + offset]); ids are given in order of first appearance.
 */
function pairIds(first: Int32Array, second: Int32Array, offset: number, count: number): { at: Int32Array; distinct: number } {
  let cap = 16;
  while (cap < count * 2) cap *= 2;
  const mask = cap - 1;
  const keyA = new Int32Array(cap).fill(-1);
  const keyB = new Int32Array(cap);
  const value = new Int32Array(cap);
  const at = new Int32Array(count);
  let distinct = 0;
  for (let i = 0; i < count; i++) {
    const a = first[i];
    const b = second[i + offset];
    // Multiply-xorshift mixing of both ids (constants from the golden ratio and MurmurHash3's finalizer).
    let h = Math.imul(a, 0x9e3779b1) ^ Math.imul(b, 0x85ebca6b);
    h = Math.imul(h ^ (h >>> 16), 0xc2b2ae35);
    h ^= h >>> 13;
    let slot = h & mask;
    while (keyA[slot] !== -1 && (keyA[slot] !== a || keyB[slot] !== b)) slot = (slot + 1) & mask;
    if (keyA[slot] === -1) {
      keyA[slot] = a;
      keyB[slot] = b;
      value[slot] = distinct++;
    }
    at[i] = value[slot];
  }
  return { at, distinct };
}

/**
 * The word n-grams of one document as small integers, exact: words get ids in order of first
 * appearance (lower-cased, so "Door" and "door" match), and the n-gram at position i gets the
 * id of the pair (id of the (n-1)-gram at i, id of word i+n-1), so each size costs one pass.
 */
class WordGrams {
  readonly chars: Int32Array;
  readonly totalChars: number;
  private readonly ids = new Map<number, { at: Int32Array; distinct: number }>();

  /** `chars`: each word's length in code points, when the caller has it already. */
  constructor(words: readonly string[], chars?: Int32Array) {
    const seen = new Map<string, number>();
    const at = new Int32Array(words.length);
    words.forEach((w, i) => {
      const key = w.toLowerCase();
      let id = seen.get(key);
      if (id === undefined) seen.set(key, (id = seen.size));
      at[i] = id;
    });
    this.chars = chars ?? Int32Array.from(words, (w) => codePoints(w));
    let total = 0;
    for (let i = 0; i < this.chars.length; i++) total += this.chars[i];
    this.totalChars = total;
    this.ids.set(1, { at, distinct: seen.size });
  }

  get length(): number {
    return this.chars.length;
  }

  /** The id of the n-gram starting at each position (length - n + 1 of them), and how many distinct ids. */
  gramIds(n: number): { at: Int32Array; distinct: number } {
    let g = this.ids.get(n);
    if (!g) {
      g = pairIds(this.gramIds(n - 1).at, this.ids.get(1)!.at, n - 1, Math.max(0, this.length - n + 1));
      this.ids.set(n, g);
    }
    return g;
  }

  /** How often each n-gram id occurs. */
  counts(n: number): Int32Array {
    const { at, distinct } = this.gramIds(n);
    const c = new Int32Array(distinct);
    for (let i = 0; i < at.length; i++) c[at[i]]++;
    return c;
  }

  /** Share of characters in words covered by an n-gram starting at a marked position (overlaps counted once). */
  coveredShare(n: number, starts: (i: number) => boolean): number {
    if (this.totalChars === 0) return 0;
    let covered = 0;
    let coveredUntil = 0; // words before this index are already counted
    for (let i = 0; i + n <= this.length; i++) {
      if (!starts(i)) continue;
      for (let j = Math.max(i, coveredUntil); j < i + n; j++) covered += this.chars[j];
      coveredUntil = Math.max(coveredUntil, i + n);
    }
    return covered / this.totalChars;
  }
}

const grams = new WeakMap<DocView, WordGrams>();
function gramsOf(doc: DocView): WordGrams {
  let g = grams.get(doc);
  if (!g) grams.set(doc, (g = new WordGrams(doc.words, doc.wordChars)));
  return g;
}

/** Sizes of a limits mapping in ascending order. */
function sizes(o: NgramLimits): number[] {
  return Object.keys(o)
    .map(Number)
    .sort((a, b) => a - b);
}

/**
 * The share of characters covered by the most frequent n-gram. An n-gram seen once is not a
 * repetition, so the share is 0 unless the top n-gram occurs at least twice (a departure from
 * the paper, whose wording would fail every very short document). Ties go to the n-gram with
 * the most characters, which gives the larger share.
 */
export function topNgramShare(g: WordGrams, n: number): number {
  const { at } = g.gramIds(n);
  const counts = g.counts(n);
  let best = -1;
  let bestCount = 2;
  let bestChars = -1;
  const done = new Uint8Array(counts.length);
  for (let i = 0; i < at.length; i++) {
    const id = at[i];
    const count = counts[id];
    if (done[id] || count < bestCount) continue;
    done[id] = 1; // the first occurrence stands for the n-gram
    let chars = 0;
    for (let j = i; j < i + n; j++) chars += g.chars[j];
    if (count > bestCount || chars > bestChars) {
      best = id;
      bestCount = count;
      bestChars = chars;
    }
  }
  if (best < 0) return 0;
  return g.coveredShare(n, (i) => at[i] === best);
}

/**
 * The share of characters covered by repeats: occurrences of an n-gram that occurred earlier in the
 * document (the first occurrence is not counted), overlaps once. So a text said twice is half
 * duplicate, as the line and paragraph rules of the same table count it (repetition.ts).
 */
export function duplicateNgramShare(g: WordGrams, n: number): number {
  const { at, distinct } = g.gramIds(n);
  const seen = new Uint8Array(distinct);
  const repeat = new Uint8Array(at.length);
  for (let i = 0; i < at.length; i++) {
    if (seen[at[i]]) repeat[i] = 1;
    else seen[at[i]] = 1;
  }
  return g.coveredShare(n, (i) => repeat[i] === 1);
}

/**
 * top_ngrams: for each n, the most frequent word n-gram may cover at most that share of the
 * document's characters (characters of words; spaces are not counted). Gopher table A1 (from memory;
 * see gopher.ts): 2-grams 0.20, 3-grams 0.18, 4-grams 0.16. Catches documents that repeat one phrase.
 * Words are compared lower-cased, punctuation attached.
 */
export const topNgrams: Rule<NgramLimits> = {
  name: "top_ngrams",
  defaults: { "2": 0.2, "3": 0.18, "4": 0.16 },
  overrides: ngramLimits(),
  check(doc, o) {
    const g = gramsOf(doc);
    for (const n of sizes(o)) {
      const share = topNgramShare(g, n);
      if (share > o[n]) return { n, share: round(share), max: o[n] };
    }
    return undefined;
  },
};

/**
 * duplicate_ngrams: for each n, the repeated word n-grams (each occurrence after the first) may
 * together cover at most that share of the characters, overlapping occurrences counted once. Gopher
 * table A1 (from memory; see gopher.ts): 5-grams 0.15, 6: 0.14, 7: 0.13, 8: 0.12, 9: 0.11, 10-grams
 * 0.10. Counting the first occurrence too doubled the share of a phrase said twice, so the published
 * limits acted like half their value: of 301 rendered manual pages of this machine, `rules: gopher`
 * (without stop_words) dropped 72 for this rule that way and drops 13 now (measured 2026-12-05).
 */
export const duplicateNgrams: Rule<NgramLimits> = {
  name: "duplicate_ngrams",
  defaults: { "5": 0.15, "6": 0.14, "7": 0.13, "8": 0.12, "9": 0.11, "10": 0.1 },
  overrides: ngramLimits(),
  check(doc, o) {
    const g = gramsOf(doc);
    for (const n of sizes(o)) {
      const share = duplicateNgramShare(g, n);
      if (share > o[n]) return { n, share: round(share), max: o[n] };
    }
    return undefined;
  },
};

export { WordGrams };
