// Public tokenizer API: load an encoding by name (cached) and encode/decode with ids identical to the reference.

import { createRequire } from "node:module";
import { SiftpackError } from "../errors.js";
import { BpeEncoder, type Encoder } from "./encoder.js";
import { ENCODING_SPECS, type EncodingSpec } from "./encodings.js";
import { compilePattern } from "./pattern.js";
import type { Pretokenizer } from "./pretokenize.js";
import { RankTable } from "./ranks.js";
import { classTable } from "./unicode-classes.js";

export type { Encoder } from "./encoder.js";
export { TokenBuffer } from "./token-buffer.js";

/** Names accepted by loadEncoding. */
export const ENCODINGS: readonly string[] = ENCODING_SPECS.map((s) => s.name);

export interface LoadOptions {
  /**
   * How to split text into pre-tokens: the hand-written scanner (default, faster) or the regex
   * translated from the encoding's pattern. Both give the same pieces; the regex is the reference
   * form, kept for cross-checking.
   */
  pretokenizer?: "scanner" | "regex";
}

interface RankFile {
  pat_str: string;
  special_tokens: Record<string, number>;
  bpe_ranks: string;
  explicit_n_vocab?: number;
}

const loaded = new Map<string, Encoder>();
const rankTables = new Map<string, { ranks: RankTable; file: RankFile }>();
// Rank files are CommonJS modules of 0.5-2.3 MB; requiring them keeps loading synchronous and
// only pays for the encodings actually used.
const requireRanks = createRequire(import.meta.url);

/** The encoder for `name` (one of ENCODINGS), built on first use and cached. Throws SP_TOKENIZER. */
export function loadEncoding(name: string, options: LoadOptions = {}): Encoder {
  const pretokenizer = options.pretokenizer ?? "scanner";
  const key = `${name}/${pretokenizer}`;
  const cached = loaded.get(key);
  if (cached !== undefined) return cached;
  const spec = ENCODING_SPECS.find((s) => s.name === name);
  if (spec === undefined) {
    throw new SiftpackError("SP_TOKENIZER", `unknown encoding ${JSON.stringify(name)}; known encodings: ${ENCODINGS.join(", ")}`);
  }
  const { ranks, file } = loadRanks(spec);
  const pre: Pretokenizer =
    pretokenizer === "regex"
      ? { kind: "regex", regex: compilePattern(spec.pattern) }
      : { kind: "scanner", scan: spec.scanner, classes: classTable() };
  const encoder = new BpeEncoder(spec.name, ranks, file.special_tokens, pre);
  if (file.explicit_n_vocab !== undefined && file.explicit_n_vocab !== encoder.vocabSize) {
    throw new SiftpackError("SP_TOKENIZER", `${name}: rank file declares ${file.explicit_n_vocab} ids but holds ${encoder.vocabSize}`);
  }
  loaded.set(key, encoder);
  return encoder;
}

function loadRanks(spec: EncodingSpec): { ranks: RankTable; file: RankFile } {
  const cached = rankTables.get(spec.name);
  if (cached !== undefined) return cached;
  let file: RankFile;
  let ranks: RankTable;
  try {
    file = requireRanks(spec.ranksModule) as RankFile;
    ranks = new RankTable(file.bpe_ranks);
  } catch (err) {
    throw new SiftpackError("SP_TOKENIZER", `cannot load the ${spec.name} ranks from ${spec.ranksModule}: ${(err as Error).message}`, { cause: err });
  }
  const entry = { ranks, file };
  rankTables.set(spec.name, entry);
  return entry;
}

export { MergeBpeEncoder, type BpeModel } from "./merge-encoder.js";
export { loadTokenizerFile, tokenizerFromJson, tokenizerJson, type TokenizerFileOptions } from "./tokenizer-file.js";
export { PretokenCounter, trainBpe, MAX_TRAIN_VOCAB, type TrainOptions } from "./train.js";
export { trainingStage, TRAINED_FILE, type TrainStageOptions } from "./train-stage.js";
export { BYTE_TO_CHAR, bytesToToken, tokenToBytes } from "./byte-level.js";
