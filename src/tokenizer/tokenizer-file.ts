// Reads and writes byte-level BPE tokenizers in the JSON tokenizer-file format of general-purpose tokenizer libraries.
//
// Supported: model.type "BPE" with vocab and merges ("a b" strings or [a, b] pairs), no dropout,
// no subword prefix/suffix, no byte fallback; normalizer null; pre_tokenizer ByteLevel, or a
// Sequence of Split (Isolated, not inverted, a Regex pattern) and ByteLevel; added_tokens. The
// decoder and post_processor are not used: decoding is byte-level by construction and the
// tokenize stage adds its own BOS/EOS. Added tokens are never matched inside text (siftpack
// encodes text that looks like a special token as plain text) — they only get ids and decode.

import { createHash } from "node:crypto";
import { readFileSync, statSync } from "node:fs";
import { basename } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import { bytesToToken, tokenToBytes } from "./byte-level.js";
import { GPT2_PATTERN } from "./encodings.js";
import { MergeBpeEncoder, type BpeModel } from "./merge-encoder.js";
import { chainSplitters, patternSplitter, type Splitter } from "./splitter.js";

export interface TokenizerFileOptions {
  /** The special token that ends a document (default "<|endoftext|>"). */
  eosToken?: string;
}

type Json = Record<string, unknown>;

/** Loads the tokenizer file at `path` (synchronously, so a worker builds it the same way). Throws SP_TOKENIZER. */
/**
 * A build asks for its tokenizer file several times (the dtype bound, cache keys per input file,
 * the manifest, each worker): parse it once per path, options and file size and time.
 */
const loaded = new Map<string, MergeBpeEncoder>();

export function loadTokenizerFile(path: string, options: TokenizerFileOptions = {}): MergeBpeEncoder {
  let key: string | undefined;
  try {
    const st = statSync(path);
    key = JSON.stringify([path, options, st.size, st.mtimeMs]);
  } catch {
    key = undefined; // readFile below reports the error
  }
  const hit = key && loaded.get(key);
  if (hit) return hit;
  const enc = parseTokenizerFile(path, options);
  if (key) loaded.set(key, enc);
  return enc;
}

function parseTokenizerFile(path: string, options: TokenizerFileOptions): MergeBpeEncoder {
  let text: string;
  try {
    text = readFileSync(path, "utf8");
  } catch (err) {
    throw new SiftpackError("SP_TOKENIZER", `tokenizer file ${path}: ${describeSystemError(err)}`, { cause: err });
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (err) {
    throw new SiftpackError("SP_TOKENIZER", `tokenizer file ${path}: not JSON: ${(err as Error).message}`, { cause: err });
  }
  // The name carries a digest of the file, so a manifest or cache key naming it changes with its content.
  const digest = createHash("sha256").update(text).digest("hex").slice(0, 16);
  return tokenizerFromJson(json, path, `${basename(path)}@${digest}`, options);
}

/** Builds an encoder from a parsed tokenizer file; `label` names the file in messages. */
export function tokenizerFromJson(json: unknown, label: string, name: string, options: TokenizerFileOptions = {}): MergeBpeEncoder {
  const bad = (what: string) => new SiftpackError("SP_TOKENIZER", `tokenizer file ${label}: ${what}`);
  if (!isObj(json)) throw bad("expected a JSON object");
  const model = json.model;
  if (!isObj(model)) throw bad("no model");
  if (model.type !== "BPE") throw bad(`unsupported model type ${JSON.stringify(model.type)}; only byte-level "BPE" is supported`);
  if (model.dropout !== undefined && model.dropout !== null && model.dropout !== 0) throw bad("unsupported BPE dropout (encoding must be deterministic)");
  for (const k of ["continuing_subword_prefix", "end_of_word_suffix"]) {
    if (model[k] !== undefined && model[k] !== null && model[k] !== "") throw bad(`unsupported model.${k} ${JSON.stringify(model[k])}`);
  }
  if (model.byte_fallback === true) throw bad("unsupported model.byte_fallback (byte-level BPE needs none)");
  if (json.normalizer !== undefined && json.normalizer !== null) throw bad(`unsupported normalizer ${describeType(json.normalizer)}; normalize with the pipeline's normalize stage`);
  const pre = preTokenizer(json.pre_tokenizer, bad);

  const vocab = model.vocab;
  if (!isObj(vocab)) throw bad("model.vocab must map tokens to ids");
  const tokens: (Uint8Array | undefined)[] = [];
  const idOf = new Map<string, number>();
  for (const [tok, id] of Object.entries(vocab)) {
    if (!Number.isInteger(id) || (id as number) < 0) throw bad(`token ${JSON.stringify(tok)} has id ${JSON.stringify(id)}`);
    const bytes = tokenToBytes(tok);
    if (bytes === undefined) throw bad(`token ${JSON.stringify(tok)} is not byte-level (a character outside the byte map)`);
    if (tokens[id as number] !== undefined) throw bad(`id ${String(id)} is given to two tokens`);
    tokens[id as number] = bytes;
    idOf.set(tok, id as number);
  }
  if (!Array.isArray(model.merges)) throw bad("model.merges must be a list");
  const merges: BpeModel["merges"] = model.merges.map((m, i) => {
    const pair = typeof m === "string" ? splitMerge(m) : m;
    if (!Array.isArray(pair) || pair.length !== 2 || typeof pair[0] !== "string" || typeof pair[1] !== "string") throw bad(`merge ${i} is not "a b" or [a, b]: ${JSON.stringify(m)}`);
    const [a, b] = pair as [string, string];
    const ia = idOf.get(a);
    const ib = idOf.get(b);
    const ir = idOf.get(a + b);
    if (ia === undefined || ib === undefined || ir === undefined) throw bad(`merge ${i} ${JSON.stringify(pair)} uses a token missing from the vocab`);
    return [ia, ib, ir];
  });

  const specialTokens: Record<string, number> = {};
  const added = json.added_tokens ?? [];
  if (!Array.isArray(added)) throw bad("added_tokens must be a list");
  for (const t of added) {
    if (!isObj(t) || typeof t.content !== "string" || !Number.isInteger(t.id)) throw bad(`bad added token ${JSON.stringify(t)}`);
    specialTokens[t.content] = t.id as number;
  }
  const eosToken = options.eosToken ?? "<|endoftext|>";
  if (specialTokens[eosToken] === undefined) {
    const known = Object.keys(specialTokens);
    throw bad(`no added token ${JSON.stringify(eosToken)} to end documents with (set eos_token; added tokens: ${known.length ? known.map((k) => JSON.stringify(k)).join(", ") : "none"})`);
  }
  return new MergeBpeEncoder({
    name,
    model: { tokens, merges, specialTokens },
    splitter: pre.splitter,
    eosToken,
    wholePieceFirst: model.ignore_merges === true,
    prefixSpace: pre.prefixSpace,
  });
}

/** "a b" → [a, b]; byte-level tokens hold no space (it is shown as "Ġ"), so the split is unambiguous. */
function splitMerge(m: string): [string, string] | undefined {
  const parts = m.split(" ");
  return parts.length === 2 ? [parts[0], parts[1]] : undefined;
}

function preTokenizer(p: unknown, bad: (what: string) => SiftpackError): { splitter: Splitter; prefixSpace: boolean } {
  if (!isObj(p)) throw bad(`unsupported pre_tokenizer ${describeType(p)}; expected ByteLevel (optionally in a Sequence with Split)`);
  const steps = p.type === "Sequence" ? p.pretokenizers : [p];
  if (!Array.isArray(steps)) throw bad("pre_tokenizer Sequence without a pretokenizers list");
  const splitters: Splitter[] = [];
  let byteLevel = 0;
  let prefixSpace = false;
  for (const s of steps) {
    if (!isObj(s)) throw bad(`bad pre_tokenizer step ${JSON.stringify(s)}`);
    if (s.type === "ByteLevel") {
      byteLevel++;
      // Only the first step may prefix the text: a later one would prefix every piece.
      if (s.add_prefix_space === true) {
        if (splitters.length > 0) throw bad("unsupported pre_tokenizer: ByteLevel with add_prefix_space after a Split");
        prefixSpace = true;
      }
      if (s.use_regex !== false) splitters.push(patternSplitter(GPT2_PATTERN));
    } else if (s.type === "Split") {
      const pat = isObj(s.pattern) ? s.pattern : {};
      const source = typeof pat.Regex === "string" ? pat.Regex : undefined;
      if (source === undefined) throw bad(`unsupported pre_tokenizer Split pattern ${JSON.stringify(s.pattern)} (only {"Regex": …})`);
      if (s.behavior !== "Isolated" || s.invert === true) throw bad(`unsupported pre_tokenizer Split behavior ${JSON.stringify(s.behavior)}${s.invert === true ? " inverted" : ""} (only Isolated, not inverted)`);
      splitters.push(patternSplitter(source));
    } else {
      throw bad(`unsupported pre_tokenizer ${describeType(s)}; expected ByteLevel or Split`);
    }
  }
  if (byteLevel !== 1) throw bad("unsupported pre_tokenizer: expected exactly one ByteLevel step");
  return { splitter: chainSplitters(splitters), prefixSpace };
}

function isObj(v: unknown): v is Json {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

function describeType(v: unknown): string {
  return isObj(v) ? `of type ${JSON.stringify(v.type)}` : JSON.stringify(v);
}

/**
 * The tokenizer file of `model` (ids as in the model; special tokens as added tokens), with the
 * GPT-2 pre-tokenizer. Keys and lists are in a fixed order, so equal models give equal bytes.
 */
export function tokenizerJson(model: BpeModel): string {
  const vocab: Record<string, number> = {};
  model.tokens.forEach((b, id) => {
    if (b !== undefined) vocab[bytesToToken(b)] = id;
  });
  const tok = (id: number) => bytesToToken(model.tokens[id] as Uint8Array);
  const added = Object.entries(model.specialTokens)
    .sort((x, y) => x[1] - y[1])
    .map(([content, id]) => ({ id, content, single_word: false, lstrip: false, rstrip: false, normalized: false, special: true }));
  const file = {
    version: "1.0",
    truncation: null,
    padding: null,
    added_tokens: added,
    normalizer: null,
    pre_tokenizer: { type: "ByteLevel", add_prefix_space: false, trim_offsets: true, use_regex: true },
    post_processor: null,
    decoder: { type: "ByteLevel", add_prefix_space: false, trim_offsets: true, use_regex: true },
    model: {
      type: "BPE",
      dropout: null,
      unk_token: null,
      continuing_subword_prefix: null,
      end_of_word_suffix: null,
      fuse_unk: false,
      byte_fallback: false,
      ignore_merges: false,
      vocab,
      merges: model.merges.map(([a, b]) => [tok(a), tok(b)]),
    },
  };
  return JSON.stringify(file, null, 2) + "\n";
}
