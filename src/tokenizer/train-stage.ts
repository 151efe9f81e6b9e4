// The tokenize stage with `train`: counts pre-tokens while spilling records to disk, trains, saves tokenizer.json, then tokenizes the spill.
//
// Two passes over the records are needed (learn the merges, then apply them), and records arrive
// as a stream; holding them all in memory would cost the corpus size, so pass one writes them as
// JSON lines to a temporary file under ctx.workDir and keeps only the pre-token counts. Only
// records of the train split (or of no split) are counted: the held-out splits must not shape the
// vocabulary they are measured with. Output is in input order.

import { createHash } from "node:crypto";
import { once } from "node:events";
import { createReadStream, createWriteStream } from "node:fs";
import { rm, writeFile } from "node:fs/promises";
import { join } from "node:path";
import { createInterface } from "node:readline";
import { SiftpackError } from "../errors.js";
import type { DocRecord, StageContext } from "../types.js";
import type { Encoder } from "./encoder.js";
import { tokenizerFromJson, tokenizerJson } from "./tokenizer-file.js";
import { PretokenCounter, trainBpe, type TrainOptions } from "./train.js";

export const TRAINED_FILE = "tokenizer.json";
const SPILL_FILE = "tokenize-train.spill.jsonl";

export interface TrainStageOptions extends TrainOptions {
  eosToken: string;
  /** Ids of one record with the stage's BOS/EOS settings, and a conversation's layout (src/chat/layout.ts). */
  tokenize(enc: Encoder, r: DocRecord): { tokens: Uint32Array; layout?: Uint32Array };
  /** How many BOS/EOS ids `tokenize` adds to each record. */
  markers: number;
  /** Called once the tokenizer is trained (before the first record is emitted). */
  onTrained?(enc: Encoder): void;
}

export function trainingStage(o: TrainStageOptions) {
  return async function* tokenizeTrained(input: AsyncIterable<DocRecord>, ctx: StageContext): AsyncGenerator<DocRecord> {
    if (ctx.workDir === "") {
      throw new SiftpackError("SP_STAGE", "tokenize with train needs the whole stream in one place; it cannot run per record in a worker");
    }
    const spill = join(ctx.workDir, SPILL_FILE);
    try {
      const counter = new PretokenCounter();
      const out = createWriteStream(spill);
      const failed = new Promise<never>((_, reject) => out.on("error", reject));
      failed.catch(() => undefined);
      let records = 0;
      for await (const r of input) {
        if ((r.split ?? "train") === "train") counter.add(r.text);
        records++;
        if (!out.write(JSON.stringify(r) + "\n")) await Promise.race([once(out, "drain"), failed]);
      }
      out.end();
      await Promise.race([once(out, "finish"), failed]);

      const model = trainBpe(counter.counts, o);
      const distinct = counter.counts.size;
      counter.counts.clear();
      const json = tokenizerJson(model);
      await writeFile(join(ctx.workDir, TRAINED_FILE), json);
      ctx.addOutputFile(TRAINED_FILE);
      // Built from the saved file, so the run encodes with exactly what it ships.
      const digest = createHash("sha256").update(json).digest("hex").slice(0, 16);
      const enc = tokenizerFromJson(JSON.parse(json), TRAINED_FILE, `trained@${digest}`, { eosToken: o.eosToken });
      ctx.log.info({ vocab: enc.vocabSize, merges: model.merges.length, distinct_pretokens: distinct, records }, "tokenizer trained");
      ctx.count("tokenizer:merges", model.merges.length);
      o.onTrained?.(enc);

      const lines = createInterface({ input: createReadStream(spill, "utf8"), crlfDelay: Infinity });
      for await (const line of lines) {
        if (line.length === 0) continue;
        // A conversation's turns are plain JSON and come back with it.
        const r = JSON.parse(line) as DocRecord;
        const { tokens, layout } = o.tokenize(enc, r);
        r.tokens = tokens;
        if (layout) r.chat = layout;
        if (r.tokens.length === 0) {
          ctx.drop(r, "no-tokens");
          continue;
        }
        // Compression on the held-out splits: bytes of UTF-8 text per token, BOS/EOS excluded
        // (conversations left out: their ids hold the template's markers, which are not in the text).
        if ((r.split ?? "train") !== "train" && !r.turns) {
          ctx.count("tokenizer:heldout_bytes", Buffer.byteLength(r.text, "utf8"));
          ctx.count("tokenizer:heldout_tokens", r.tokens.length - o.markers);
        }
        yield r;
      }
    } finally {
      await rm(spill, { force: true });
    }
  };
}
