// The Encoder: pre-tokenize, BPE each piece, and decode ids back to text.

import { SiftpackError } from "../errors.js";
import { BytePairEncoder } from "./bpe.js";
import type { Pretokenizer } from "./pretokenize.js";
import type { RankTable } from "./ranks.js";
import { TokenBuffer } from "./token-buffer.js";

const SCRATCH_KEEP = 1 << 20; // ids

export interface Encoder {
  /** "gpt2", "r50k_base", "p50k_base", "cl100k_base" or "o200k_base". */
  name: string;
  /** Number of ids including special tokens (max id + 1; gpt2: 50257). */
  vocabSize: number;
  /** Special token strings and their ids, e.g. {"<|endoftext|>": 50256}. */
  specialTokens: Record<string, number>;
  /** Id of <|endoftext|>. */
  eosId: number;
  /** Ids of ordinary text: special-token strings in `text` are encoded as plain text, never as special ids. */
  encode(text: string): number[];
  /** Appends the ids of `text` (as encode) to `out`; returns how many were appended. */
  encodeInto(text: string, out: TokenBuffer): number;
  /** Text of `ids`; special ids decode to their strings, invalid UTF-8 to U+FFFD. Unknown ids throw SP_TOKENIZER. */
  decode(ids: ArrayLike<number>): string;
}

export class BpeEncoder implements Encoder {
  readonly name: string;
  readonly vocabSize: number;
  readonly specialTokens: Record<string, number>;
  readonly eosId: number;
  private readonly ranks: RankTable;
  private readonly pre: Pretokenizer;
  private readonly bpe: BytePairEncoder;
  private readonly specialBytes = new Map<number, Uint8Array>();
  private scratch = new TokenBuffer(4096);
  private readonly utf8Decoder = new TextDecoder("utf-8", { ignoreBOM: true });

  constructor(name: string, ranks: RankTable, specialTokens: Record<string, number>, pre: Pretokenizer) {
    this.name = name;
    this.ranks = ranks;
    this.pre = pre;
    this.bpe = new BytePairEncoder(ranks);
    this.specialTokens = { ...specialTokens };
    let maxId = ranks.maxRank;
    const utf8 = new TextEncoder();
    for (const [text, id] of Object.entries(specialTokens)) {
      if (ranks.has(id)) throw new SiftpackError("SP_TOKENIZER", `${name}: special token ${text} reuses ordinary id ${id}`);
      this.specialBytes.set(id, utf8.encode(text));
      maxId = Math.max(maxId, id);
    }
    this.vocabSize = maxId + 1;
    const eos = specialTokens["<|endoftext|>"];
    if (eos === undefined) throw new SiftpackError("SP_TOKENIZER", `${name}: no <|endoftext|> special token`);
    this.eosId = eos;
  }

  encode(text: string): number[] {
    const buf = this.scratch;
    buf.clear();
    const n = this.encodeInto(text, buf);
    const ids = buf.ids;
    const out = new Array<number>(n);
    for (let k = 0; k < n; k++) out[k] = ids[k];
    // Encoders live as long as the process; do not keep one huge document's worth of scratch.
    if (ids.length > SCRATCH_KEEP) this.scratch = new TokenBuffer(4096);
    return out;
  }

  encodeInto(text: string, out: TokenBuffer): number {
    // Same loops as pretokenize.forEachPiece, inlined so the hot path has no callback per piece.
    const before = out.length;
    const bpe = this.bpe;
    const pre = this.pre;
    if (pre.kind === "scanner") {
      const { scan, classes } = pre;
      for (let i = 0; i < text.length; ) {
        const e = scan(text, i, classes);
        bpe.encodePiece(text, i, e, out);
        i = e;
      }
    } else {
      const re = pre.regex;
      re.lastIndex = 0;
      for (let m = re.exec(text); m !== null; m = re.exec(text)) {
        if (m[0].length === 0) re.lastIndex++;
        else bpe.encodePiece(text, m.index, m.index + m[0].length, out);
      }
    }
    return out.length - before;
  }

  decode(ids: ArrayLike<number>): string {
    let total = 0;
    for (let k = 0; k < ids.length; k++) total += this.byteLengthOf(ids[k]);
    const bytes = new Uint8Array(total);
    let at = 0;
    for (let k = 0; k < ids.length; k++) {
      const id = ids[k];
      if (this.ranks.has(id)) {
        at = this.ranks.copyBytes(id, bytes, at);
      } else {
        const special = this.specialBytes.get(id) as Uint8Array;
        bytes.set(special, at);
        at += special.length;
      }
    }
    return this.utf8Decoder.decode(bytes);
  }

  private byteLengthOf(id: number): number {
    const n = this.ranks.byteLength(id);
    if (n > 0) return n;
    const special = this.specialBytes.get(id);
    if (special !== undefined) return special.length;
    throw new SiftpackError("SP_TOKENIZER", `${this.name}: cannot decode unknown token id ${String(id)}`);
  }
}
