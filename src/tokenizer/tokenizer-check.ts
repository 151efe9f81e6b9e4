// The checks of a tokenizer file's entries (vocab ids, added tokens, merges) and of its text (a key given twice).
//
// A tokenizer file is input written by someone else: every id is checked before it indexes an
// array, since an id of 2^40 would wrap to 0 in a token shard and an id of 4e9 would make an array
// of four billion slots. Each problem is one message naming the entry; the caller adds the file.
//
// Rules (and why):
// - ids are whole numbers from 0 to 4294967295 (token shards hold at most uint32 ids);
// - ids of vocab entries are below 2^21, the largest the merge encoder's pair keys hold;
// - ids are dense enough: the largest id is below 65536 (any such file fits uint16 shards and small
//   tables) or below twice the number of distinct ids. Files written by this project's trainer use
//   every id in [0, count); published files use [0, vocab) plus added tokens right after it, so both
//   pass, while one stray huge id (which would inflate vocab_size and the token dtype) does not;
// - no id is given to two vocab entries, nor to two added tokens, nor to an added token and a vocab
//   entry with other bytes (the trainer writes its special tokens both ways, with the same bytes);
// - no vocab entry and no added token is listed twice;
// - merges name vocab entries whose concatenation is a vocab entry too, and every byte has a token
//   (byte-level BPE falls back to bytes).

import { tokenToBytes } from "./byte-level.js";
import type { BpeModel } from "./merge-encoder.js";

/** Largest id a token shard can hold (uint32). */
export const MAX_ID = 4294967295;
/** Largest id of an ordinary (vocab) token: the merge encoder keys pairs as left * 2^21 + right. */
export const MAX_VOCAB_ID = 2097151;
/** Any id below this is allowed however sparse the file is (uint16 shards, tables of at most 64k slots). */
const DENSE_FLOOR = 65536;

/** Problems are reported through `bad(what)`, which returns the error to throw. */
type Bad = (what: string) => Error;

const q = (s: string) => JSON.stringify(s);

/** Why `id` is not an acceptable id, or undefined. `limit` is the largest allowed. */
function idProblem(id: unknown, limit: number, limitNote: string): string | undefined {
  if (id === undefined) return "has no id";
  if (typeof id !== "number") return `has id ${JSON.stringify(id)}; ids are whole numbers`;
  if (!Number.isInteger(id)) return `has id ${id}; ids are whole numbers`;
  if (id < 0) return `has id ${id}; ids start at 0`;
  if (id > MAX_ID) return `has id ${id}, above the largest id ${MAX_ID}`;
  if (id > limit) return `has id ${id}, above ${limit}, ${limitNote}`;
  return undefined;
}

function sameBytes(a: Uint8Array, b: Uint8Array): boolean {
  return a.length === b.length && a.every((x, k) => x === b[k]);
}

/**
 * The model of a tokenizer file's `model.vocab`, `model.merges` and `added_tokens` (already known
 * to be an object, a list and a list), or the first problem thrown through `bad`.
 */
export function checkedModel(vocab: Record<string, unknown>, mergeList: unknown[], added: unknown[], bad: Bad): BpeModel {
  const bytesOf = new Map<number, Uint8Array>();
  const tokenOf = new Map<number, string>();
  const idOf = new Map<string, number>();
  let maxId = -1;
  let maxName = "";
  for (const [tok, id] of Object.entries(vocab)) {
    const problem = idProblem(id, MAX_VOCAB_ID, "the largest id of a vocab entry siftpack's encoder supports");
    if (problem) throw bad(`vocab entry ${q(tok)} ${problem}`);
    const n = id as number;
    const bytes = tokenToBytes(tok);
    if (bytes === undefined || bytes.length === 0) throw bad(`vocab entry ${q(tok)} is not a byte-level token (${bytes ? "empty" : "a character outside the byte map"})`);
    const other = tokenOf.get(n);
    if (other !== undefined) throw bad(`vocab entries ${q(other)} and ${q(tok)} both have id ${n}`);
    bytesOf.set(n, bytes);
    tokenOf.set(n, tok);
    idOf.set(tok, n);
    if (n > maxId) [maxId, maxName] = [n, `vocab entry ${q(tok)}`];
  }

  const specialTokens: Record<string, number> = Object.create(null);
  const addedOf = new Map<number, string>();
  const utf8 = new TextEncoder();
  added.forEach((t, k) => {
    const entry = t as { content?: unknown; id?: unknown } | null;
    if (typeof entry !== "object" || entry === null || Array.isArray(entry) || typeof entry.content !== "string" || entry.content === "")
      throw bad(`added_tokens[${k}] is not an object with a non-empty "content" string`);
    const content = entry.content;
    const problem = idProblem(entry.id, MAX_ID, "");
    if (problem) throw bad(`added token ${q(content)} ${problem}`);
    const n = entry.id as number;
    if (Object.hasOwn(specialTokens, content)) throw bad(`added token ${q(content)} is listed twice`);
    const twin = addedOf.get(n);
    if (twin !== undefined) throw bad(`added tokens ${q(twin)} and ${q(content)} both have id ${n}`);
    const inVocab = bytesOf.get(n);
    if (inVocab !== undefined && !sameBytes(inVocab, utf8.encode(content)))
      throw bad(`added token ${q(content)} has id ${n}, which is vocab entry ${q(tokenOf.get(n)!)}`);
    specialTokens[content] = n;
    addedOf.set(n, content);
    if (n > maxId) [maxId, maxName] = [n, `added token ${q(content)}`];
  });

  const count = new Set([...bytesOf.keys(), ...addedOf.keys()]).size;
  if (maxId >= DENSE_FLOOR && maxId >= 2 * count)
    throw bad(`${maxName} has id ${maxId}, but the file has only ${count} ids: ids of 65536 and above must stay below twice the number of ids (${2 * count})`);

  const tokens: (Uint8Array | undefined)[] = new Array(maxId + 1).fill(undefined);
  for (const [n, b] of bytesOf) tokens[n] = b;

  const merges: BpeModel["merges"] = mergeList.map((m, k) => {
    const pair = typeof m === "string" ? splitMerge(m) : m;
    if (!Array.isArray(pair) || pair.length !== 2 || typeof pair[0] !== "string" || typeof pair[1] !== "string") throw bad(`merge ${k} is not "a b" or [a, b]: ${JSON.stringify(m)}`);
    const [a, b] = pair as [string, string];
    const ia = idOf.get(a);
    const ib = idOf.get(b);
    const ir = idOf.get(a + b);
    for (const [name, id] of [[a, ia], [b, ib]] as const) if (id === undefined) throw bad(`merge ${k} ${JSON.stringify(pair)} uses a token missing from the vocab: ${q(name)}`);
    if (ir === undefined) throw bad(`merge ${k} ${JSON.stringify(pair)} uses a token missing from the vocab: its result ${q(a + b)}`);
    return [ia!, ib!, ir];
  });
  const byteSeen = new Uint8Array(256);
  for (const b of bytesOf.values()) if (b.length === 1) byteSeen[b[0]] = 1;
  const missing = byteSeen.indexOf(0);
  if (missing >= 0) throw bad(`no vocab entry for byte 0x${missing.toString(16).padStart(2, "0")}: a byte-level vocab has a token for each of the 256 bytes`);
  return { tokens, merges, specialTokens };
}

/** "a b" → [a, b]; byte-level tokens hold no space (it is shown as "Ġ"), so the split is unambiguous. */
function splitMerge(m: string): [string, string] | undefined {
  const parts = m.split(" ");
  return parts.length === 2 ? [parts[0], parts[1]] : undefined;
}

/**
 * The first key given twice in one object of a JSON text (JSON.parse keeps the last silently, so a
 * token listed twice would lose an id unseen), with where: "model.vocab", "added_tokens[3]".
 * `text` must already have parsed; the scan is iterative, so deep nesting cannot overflow the stack.
 */
export function duplicateKey(text: string): { key: string; at: string } | undefined {
  // One frame per open container: its keys (objects) or its element index (arrays), and its name.
  const frames: { keys?: Set<string>; index: number; name: string }[] = [];
  let expectKey = false;
  let lastKey = "";
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c === 0x22 /* " */) {
      // The closing quote: the next one not escaped (preceded by an even run of backslashes).
      let j = text.indexOf('"', i + 1);
      for (;;) {
        let k = j - 1;
        while (text.charCodeAt(k) === 0x5c /* \ */) k--;
        if ((j - 1 - k) % 2 === 0) break;
        j = text.indexOf('"', j + 1);
      }
      if (expectKey) {
        const raw = text.slice(i + 1, j);
        const key = raw.includes("\\") ? (JSON.parse(`"${raw}"`) as string) : raw;
        const top = frames[frames.length - 1];
        if (top.keys!.has(key)) return { key, at: top.name || "(top level)" };
        top.keys!.add(key);
        lastKey = key;
        expectKey = false;
      }
      i = j;
    } else if (c === 0x7b /* { */ || c === 0x5b /* [ */) {
      const parent = frames[frames.length - 1];
      const name = parent === undefined ? "" : parent.keys ? (parent.name ? `${parent.name}.${lastKey}` : lastKey) : `${parent.name}[${parent.index}]`;
      frames.push({ keys: c === 0x7b ? new Set() : undefined, index: 0, name });
      expectKey = c === 0x7b;
    } else if (c === 0x7d /* } */ || c === 0x5d /* ] */) {
      frames.pop();
    } else if (c === 0x2c /* , */) {
      const top = frames[frames.length - 1];
      top.index++;
      expectKey = top.keys !== undefined;
    }
  }
  return undefined;
}
