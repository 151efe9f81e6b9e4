// tokenize: encodes each record's text to token ids with a byte-level BPE encoding, adding BOS/EOS.
import { defineStage } from "./stage.js";
import { bool, field, obj, str, type Infer } from "../pipeline/schema.js";
import { ENCODINGS, loadEncoding, TokenBuffer, type Encoder } from "../tokenizer/index.js";

export const tokenizeOptions = obj({
  encoding: field(str({ oneOf: ENCODINGS }), { default: "gpt2" }),
  eos: field(bool(), { default: true }),
  bos: field(bool(), { default: false }),
});
export type TokenizeOptions = Infer<typeof tokenizeOptions>;

/**
 * Token ids of one document: [BOS] text [EOS]. The encoding's end-of-text id serves as both
 * markers. `buf` is scratch space reused across documents; the result is a fresh array.
 */
export function tokenizeText(enc: Encoder, text: string, o: TokenizeOptions, buf = new TokenBuffer()): Uint32Array {
  buf.clear();
  if (o.bos) buf.push(enc.eosId);
  enc.encodeInto(text, buf);
  if (o.eos) buf.push(enc.eosId);
  return buf.toArray();
}

export default defineStage({
  name: "tokenize",
  summary: "byte-level BPE token ids",
  perRecord: true,
  options: tokenizeOptions,
  async create(o) {
    const enc = await loadEncoding(o.encoding);
    const buf = new TokenBuffer(1 << 16);
    return async function* tokenize(input, ctx) {
      for await (const r of input) {
        r.tokens = tokenizeText(enc, r.text, o, buf);
        if (r.tokens.length === 0) ctx.drop(r, "no-tokens");
        else yield r;
      }
    };
  },
});
