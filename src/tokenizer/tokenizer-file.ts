// Reads and writes byte-level BPE tokenizers in the JSON tokenizer-file format of general-purpose tokenizer libraries.
//
// Supported: model.type "BPE" with vocab and merges ("a b" strings or [a, b] pairs), no dropout,
// no subword prefix/suffix, no byte fallback; normalizer null; pre_tokenizer ByteLevel, or a
// Sequence of Split (Isolated, not inverted, a Regex pattern) and ByteLevel; added_tokens. The
// decoder and post_processor are not used: decoding is byte-level by construction and the
// tokenize stage adds its own BOS/EOS. Added tokens are never matched inside text (siftpack
// encodes text that looks like a special token as plain text) — they only get ids and decode.
// (The format as written by the Hugging Face tokenizers library, from memory; the reference test
// in tests/tokenizer/tokenizer-file.test.ts reads the same files with its JavaScript port.)
// Every id, token and merge is checked before use (tokenizer-check.ts): a file is input, and each
// problem is one SP_TOKENIZER error naming the file and the entry.

import { createHash } from "node:crypto";
import { readFileSync, statSync } from "node:fs";
import { basename } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import { bytesToToken } from "./byte-level.js";
import { checkedModel, duplicateKey } from "./tokenizer-check.js";
import { GPT2_PATTERN } from "./encodings.js";
import { MergeBpeEncoder, type BpeModel } from "./merge-encoder.js";
import { chainSplitters, patternSplitter, type Splitter } from "./splitter.js";

export interface TokenizerFileOptions {
  /** The special token that ends a document (default "<|endoftext|>"). */
  eosToken?: string;
}

type Json = Record<string, unknown>;

/**
 * A build asks for its tokenizer file several times (the dtype bound, cache keys per input file,
 * the manifest, each worker): parse it once per path, options and file size and time.
 */
const loaded = new Map<string, MergeBpeEncoder>();

/**
 * Loads the tokenizer file at `path` (synchronously, so a worker builds it the same way), checking
 * every entry (tokenizer-check.ts). Throws SP_TOKENIZER naming the file as `shownAs` (default `path`).
 */
export function loadTokenizerFile(path: string, options: TokenizerFileOptions = {}, shownAs = path): MergeBpeEncoder {
  let key: string | undefined;
  try {
    const st = statSync(path);
    key = JSON.stringify([path, options, st.size, st.mtimeMs]);
  } catch {
    key = undefined; // readFile below reports the error
  }
  const hit = key && loaded.get(key);
  if (hit) return hit;
  const enc = parseTokenizerFile(path, options, shownAs);
  if (key) loaded.set(key, enc);
  return enc;
}

function parseTokenizerFile(path: string, options: TokenizerFileOptions, shownAs: string): MergeBpeEncoder {
  const bad = (what: string, cause?: unknown) => new SiftpackError("SP_TOKENIZER", `tokenizer file ${shownAs}: ${what}`, cause === undefined ? {} : { cause });
  let text: string;
  try {
    text = readFileSync(path, "utf8");
  } catch (err) {
    throw bad(describeSystemError(err), err);
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (err) {
    throw bad(`not JSON: ${jsonProblem(err as Error, text)}`, err);
  }
  const twice = duplicateKey(text);
  if (twice) throw bad(twice.at === "model.vocab" ? `vocab entry ${JSON.stringify(twice.key)} is listed twice` : `key ${JSON.stringify(twice.key)} appears twice in ${twice.at}`);
  // The name carries a digest of the file, so a manifest or cache key naming it changes with its content.
  const digest = createHash("sha256").update(text).digest("hex").slice(0, 16);
  return tokenizerFromJson(json, shownAs, `${basename(path)}@${digest}`, options);
}

/**
 * JSON.parse's complaint on one line: V8 quotes the text around the fault, newlines and all, or
 * gives a character position; we drop the quote and turn a position into line and column.
 */
function jsonProblem(err: Error, text: string): string {
  let m = err.message.replace(/, ".*" is not valid JSON$/s, "");
  m = m.replace(/ in JSON at position (\d+)(?: \(line \d+ column \d+\))?$/, (_all, pos: string) => {
    const before = text.slice(0, Number(pos));
    const line = before.split("\n").length;
    return ` at line ${line}, column ${Number(pos) - before.lastIndexOf("\n")}`;
  });
  return m.replace(/[\u0000-\u001f\u007f]/g, (c) => JSON.stringify(c).slice(1, -1));
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
  if (!Array.isArray(model.merges)) throw bad("model.merges must be a list");
  const added = json.added_tokens ?? [];
  if (!Array.isArray(added)) throw bad("added_tokens must be a list");
  const { tokens, merges, specialTokens } = checkedModel(vocab, model.merges, added, bad);
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
      try {
        splitters.push(patternSplitter(source));
      } catch (err) {
        // Our translation's message, or the RegExp engine's without its quote of the (long) translated source.
        const why = err instanceof SiftpackError ? err.message : `not a valid regular expression: ${(err as Error).message.replace(/^Invalid regular expression: \/.*\/[a-z]*: /s, "")}`;
        throw bad(`pre_tokenizer Split pattern ${JSON.stringify(source)}: ${why}`);
      }
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
