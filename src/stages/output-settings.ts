// What the build's last phase needs from the pipeline's stages as plain values: the tokenizer's
// end-of-text id and vocabulary bound (for the token dtype), and the packing settings.
import type { StageEntry } from "../pipeline/config.js";
import { STAGES } from "./index.js";
import { formOf } from "./stage.js";
import { tokenizeBounds, type TokenizeOptions } from "./tokenize.js";
import type { PackOptions } from "./pack.js";
import { tokenizerFromJson, TRAINED_FILE, type Encoder } from "../tokenizer/index.js";
import { encoderFor } from "./tokenize.js";
import { createHash } from "node:crypto";

export interface OutputSettings {
  eosId: number;
  vocabSize: number;
  tokenDtype: "uint16" | "uint32";
  segmentDtype: "uint16" | "uint32";
  /** Whether documents start with BOS and end with EOS (for the manifest). */
  bos: boolean;
  eos: boolean;
  /** The packing stage's options (the sink's). */
  pack: PackOptions;
  /** The conversation template's roles, in the order layouts number them; absent without a template. */
  roles?: string[];
  /** The tokenizer, given the build file a training tokenize stage wrote (its text), if any. */
  encoder(trainedJson?: string): Encoder;
}

/** The stages layer knows its own stages: the tokenize entry and the sink (pack); the engine asks here instead of naming them. */
export function outputSettings(stages: StageEntry[], baseDir: string): OutputSettings {
  const sink = stages.find((e) => formOf(STAGES[e.name], e.options).kind === "sink");
  const tok = stages.find((e) => e.name === "tokenize");
  if (!sink || !tok) throw new Error("outputSettings: the pipeline rules require a tokenize stage and a pack stage last");
  const t = tok.options as TokenizeOptions;
  const pack = sink.options as PackOptions;
  const bounds = tokenizeBounds(t, baseDir);
  return {
    eosId: bounds.eosId,
    vocabSize: bounds.vocabSize,
    tokenDtype: bounds.vocabSize <= 65536 ? "uint16" : "uint32",
    segmentDtype: pack.length < 65536 ? "uint16" : "uint32",
    bos: t.bos,
    eos: t.eos,
    pack,
    ...(t.template ? { roles: Object.keys(t.template.roles) } : {}),
    // A tokenizer trained in this build keeps the name training gave it: trained@<digest of its file>.
    encoder: (trainedJson) =>
      trainedJson !== undefined
        ? tokenizerFromJson(JSON.parse(trainedJson), TRAINED_FILE, `trained@${createHash("sha256").update(trainedJson).digest("hex").slice(0, 16)}`, { eosToken: t.eos_token ?? "<|endoftext|>" })
        : encoderFor(t, baseDir),
  };
}
