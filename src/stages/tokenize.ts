// tokenize: encodes each record's text to token ids with a byte-level BPE (named encoding, tokenizer file, or trained here), adding BOS/EOS.
import { isAbsolute, relative, resolve } from "node:path";
import { SiftpackError } from "../errors.js";
import { defineStage, type Stage, type StageEnv } from "./stage.js";
import { bool, field, list, num, obj, refine, str, type Infer, type Schema } from "../pipeline/schema.js";
import { CompiledTemplate, templateExample, templateSchema, unknownSpecials, type ChatTemplate } from "../chat/template.js";
import type { DocRecord } from "../types.js";
import { ENCODINGS, loadEncoding, loadTokenizerFile, MAX_TRAIN_VOCAB, TokenBuffer, trainingStage, type Encoder } from "../tokenizer/index.js";

const DEFAULT_EOS = "<|endoftext|>";

const trainOptions = obj({
  vocab_size: field(num({ integer: true, min: 257, max: MAX_TRAIN_VOCAB }), { required: true }),
  min_frequency: field(num({ integer: true, min: 1 }), { default: 2 }),
  special_tokens: field(list(str({ nonEmpty: true }), { nonEmpty: true }), { default: [DEFAULT_EOS] }),
});
export type TrainTokenizerOptions = Infer<typeof trainOptions>;

const base = obj({
  encoding: field(str({ oneOf: ENCODINGS }), { default: "gpt2" }),
  tokenizer: field(str({ nonEmpty: true })),
  train: field(trainOptions),
  eos_token: field(str({ nonEmpty: true })),
  eos: field(bool(), { default: true }),
  bos: field(bool(), { default: false }),
  // How a conversation record (a source with `turns`) becomes ids and targets; no default, so a
  // pipeline without conversations keeps its resolved form and hash.
  template: field(templateSchema),
});

/** `encoding` (default gpt2), `tokenizer` and `train` are alternatives: the raw keys are checked, since `encoding` gets a default. */
function exclusive<T>(schema: Schema<T>): Schema<T> {
  return {
    describe: schema.describe,
    check(value, path, issues) {
      const given = typeof value === "object" && value !== null ? Object.keys(value).filter((k) => k === "encoding" || k === "tokenizer" || k === "train") : [];
      if (given.length > 1) issues.push({ path: [...path, given[1]], atKey: true, message: `"${given.join('" and "')}" are alternatives: give one of encoding, tokenizer, train` });
      return schema.check(value, path, issues);
    },
  };
}

export const tokenizeOptions = refine(exclusive(base), (o, path, issues) => {
  const r = o as TokenizeOptions;
  if (r.eos_token !== undefined && r.tokenizer === undefined && r.train === undefined)
    issues.push({ path: [...path, "eos_token"], message: "eos_token applies to tokenizer or train; the named encodings end documents with <|endoftext|>" });
  if (r.train !== undefined) {
    const eos = r.eos_token ?? DEFAULT_EOS;
    if (!r.train.special_tokens.includes(eos)) issues.push({ path: [...path, "train", "special_tokens"], message: `must include the eos token ${JSON.stringify(eos)}` });
    const floor = 256 + new Set(r.train.special_tokens).size + 1;
    if (r.train.vocab_size < floor) issues.push({ path: [...path, "train", "vocab_size"], message: `expected at least ${floor} (256 bytes, the special tokens and one merge)` });
  }
  // With train the special tokens are known from the options: the template is checked here, at its place in the file.
  if (r.template !== undefined && r.train !== undefined) issues.push(...unknownSpecials(r.template, r.train.special_tokens, [...path, "template"]));
});

/** Resolved options; `tokenizer`, `train` and `eos_token` are absent unless given. */
export type TokenizeOptions = Omit<Infer<typeof base>, "tokenizer" | "train" | "eos_token" | "template"> & {
  tokenizer?: string;
  train?: TrainTokenizerOptions;
  eos_token?: string;
  template?: ChatTemplate;
};

/**
 * Token ids of one document: [BOS] text [EOS]. The encoder's end-of-text id serves as both
 * markers. `buf` is scratch space reused across documents; the result is a fresh array.
 */
export function tokenizeText(enc: Encoder, text: string, o: TokenizeOptions, buf = new TokenBuffer()): Uint32Array {
  buf.clear();
  if (o.bos) buf.push(enc.eosId);
  enc.encodeInto(text, buf);
  if (o.eos) buf.push(enc.eosId);
  return buf.toArray();
}

/**
 * The encoder of a `tokenize` entry without `train`: a tokenizer file (relative to baseDir) or a
 * named encoding. A tokenizer file the pipeline names is part of the pipeline's configuration, so
 * its problems (unreadable, not JSON, a bad entry) are SP_PIPELINE_KEY: exit 2, like a bad key.
 */
export function encoderFor(o: TokenizeOptions, baseDir: string): Encoder {
  if (o.train !== undefined) throw new Error("encoderFor: a trained tokenizer exists only after its stage has read the records");
  if (o.tokenizer !== undefined) {
    const path = resolve(baseDir, o.tokenizer);
    try {
      return loadTokenizerFile(path, { eosToken: o.eos_token ?? DEFAULT_EOS }, shownPath(path));
    } catch (err) {
      if (err instanceof SiftpackError && err.code === "SP_TOKENIZER") throw new SiftpackError("SP_PIPELINE_KEY", err.message, { cause: err });
      throw err;
    }
  }
  return loadEncoding(o.encoding);
}

/**
 * The ids of a record, and for a conversation its layout (src/chat/layout.ts): a record with turns
 * is rendered by the template, any other as tokenizeText.
 */
export function tokenizeRecord(enc: Encoder, r: Pick<DocRecord, "text" | "turns">, o: TokenizeOptions, template: CompiledTemplate | undefined, buf: TokenBuffer): { tokens: Uint32Array; layout?: Uint32Array } {
  if (!r.turns) return { tokens: tokenizeText(enc, r.text, o, buf) };
  if (!template) throw new SiftpackError("SP_PIPELINE_KEY", "a conversation record reached a tokenize stage without a template");
  return template.encode(enc, r, o.bos, o.eos, buf);
}

/** The template's special-token names the encoder does not know, as a pipeline error. */
export function checkTemplate(o: TokenizeOptions, enc: Encoder): void {
  if (o.template === undefined) return;
  const issues = unknownSpecials(o.template, Object.keys(enc.specialTokens), ["template"]);
  if (issues.length > 0) throw new SiftpackError("SP_PIPELINE_KEY", `tokenize: ${issues.map((i) => `${i.path.join(".")}: ${i.message}`).join("; ")}`);
}

/**
 * For `siftpack plan` (and anyone checking a pipeline before a build): loads, and so checks, the
 * tokenizer file of each tokenize entry. Throws SP_PIPELINE_KEY naming the file and the entry.
 */
export function checkTokenizerFiles(stages: ReadonlyArray<{ name: string; options: unknown }>, baseDir: string): void {
  for (const s of stages) {
    const o = s.options as TokenizeOptions;
    if (s.name === "tokenize" && o.tokenizer !== undefined && o.train === undefined) encoderFor(o, baseDir);
  }
}

/** A path for messages: relative to the current directory when inside it (as the pipeline loader shows paths). */
function shownPath(p: string): string {
  const r = relative(process.cwd(), p);
  return r && !r.startsWith("..") && !isAbsolute(r) ? r : p;
}

/**
 * What the run needs before any record is tokenized: the EOS id and an upper bound of the
 * vocabulary size (for the token dtype). With `train` both follow from the options: special
 * tokens take ids 0..k-1 and training never exceeds vocab_size.
 */
export function tokenizeBounds(o: TokenizeOptions, baseDir: string): { eosId: number; vocabSize: number } {
  if (o.train !== undefined) return { eosId: [...new Set(o.train.special_tokens)].indexOf(o.eos_token ?? DEFAULT_EOS), vocabSize: o.train.vocab_size };
  const enc = encoderFor(o, baseDir);
  return { eosId: enc.eosId, vocabSize: enc.vocabSize };
}

/** The stage and, once known, its encoder (with `train`: after the stage has read all records). */
export function createTokenize(o: TokenizeOptions, env: StageEnv): { stage: Stage; encoder(): Encoder } {
  const buf = new TokenBuffer(1 << 16);
  const template = o.template ? new CompiledTemplate(o.template) : undefined;
  if (o.train !== undefined) {
    let trained: Encoder | undefined;
    const stage = trainingStage({
      vocabSize: o.train.vocab_size,
      minFrequency: o.train.min_frequency,
      specialTokens: o.train.special_tokens,
      eosToken: o.eos_token ?? DEFAULT_EOS,
      tokenize: (enc, r) => tokenizeRecord(enc, r, o, template, buf),
      markers: (o.bos ? 1 : 0) + (o.eos ? 1 : 0),
      onTrained: (enc) => (trained = enc),
    });
    return {
      stage,
      encoder() {
        if (trained === undefined) throw new Error("the tokenizer is not trained yet: the tokenize stage has not finished reading");
        return trained;
      },
    };
  }
  const enc = encoderFor(o, env.baseDir);
  checkTemplate(o, enc);
  const stage: Stage = async function* tokenize(input, ctx) {
    for await (const r of input) {
      const { tokens, layout } = tokenizeRecord(enc, r, o, template, buf);
      r.tokens = tokens;
      if (layout) r.chat = layout;
      if (r.tokens.length === 0) ctx.drop(r, "no-tokens");
      else yield r;
    }
  };
  return { stage, encoder: () => enc };
}

export default defineStage({
  name: "tokenize",
  summary: "byte-level BPE token ids",
  // Per record (ids depend on the text alone, so earlier ids of an unchanged text can be reused)
  // except with `train`, which must see the whole stream before it encodes anything.
  form: (o) => (o.train !== undefined ? { kind: "whole" } : { kind: "record", encodes: true }),
  // A tokenizer file is named by a hash of its content, so editing it invalidates cached results.
  identity: (o, baseDir) => (o.train !== undefined ? "trained" : encoderFor(o, baseDir).name),
  reads: async (o) => (o.tokenizer !== undefined ? [o.tokenizer] : []),
  options: tokenizeOptions as Schema<TokenizeOptions>,
  // A conversation as the template renders it, for comparing with a model's documented format.
  explain: (o) => (o.template ? { template_example: templateExample(o.template) } : {}),
  create(o, env) {
    return createTokenize(o, env).stage;
  },
});
