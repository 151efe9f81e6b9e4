// tokenize: encodes each record's text to token ids with a byte-level BPE encoding, adding BOS/EOS.
import { defineStage } from "./stage.js";
import { bool, field, obj, str, type Infer } from "../pipeline/schema.js";
import { ENCODINGS, loadEncoding, type Encoder } from "../tokenizer/index.js";

export const tokenizeOptions = obj({
  encoding: field(str({ oneOf: ENCODINGS }), { default: "gpt2" }),
  eos: field(bool(), { default: true }),
  bos: field(bool(), { default: false }),
});
export type TokenizeOptions = Infer<typeof tokenizeOptions>;

/** Token ids of one document: [BOS] text [EOS]. The encoding's end-of-text id serves as both markers. */
export function tokenizeText(enc: Encoder, text: string, o: TokenizeOptions): Uint32Array {
  const ids = enc.encode(text);
  const n = ids.length + (o.bos ? 1 : 0) + (o.eos ? 1 : 0);
  const out = new Uint32Array(n);
  let k = 0;
  if (o.bos) out[k++] = enc.eosId;
  for (let i = 0; i < ids.length; i++) out[k++] = ids[i];
  if (o.eos) out[k++] = enc.eosId;
  return out;
}

export default defineStage({
  name: "tokenize",
  summary: "byte-level BPE token ids",
  options: tokenizeOptions,
  async create(o) {
    const enc = await loadEncoding(o.encoding);
    return async function* tokenize(input, ctx) {
      for await (const r of input) {
        r.tokens = tokenizeText(enc, r.text, o);
        if (r.tokens.length === 0) ctx.drop(r, "no-tokens");
        else yield r;
      }
    };
  },
});
