// Rank tables decode js-tiktoken's rank files to exactly the reference's token bytes.
//
// Reference: tiktoken npm package, WASM build of OpenAI's tiktoken (decode_single_token_bytes).

import gpt2Ranks from "js-tiktoken/ranks/gpt2";
import { get_encoding, type TiktokenEncoding } from "tiktoken";
import { describe, expect, it } from "vitest";
import { ENCODING_SPECS } from "../../src/tokenizer/encodings.js";
import { NO_RANK, RankTable } from "../../src/tokenizer/ranks.js";

describe.each(ENCODING_SPECS.map((s) => [s.name, s.ranksModule] as const))("%s ranks", (name, module) => {
  it("hold every token's bytes as the reference does, and look each one up", async () => {
    const file = (await import(module)) as { default: { bpe_ranks: string; special_tokens: Record<string, number> } };
    const table = new RankTable(file.default.bpe_ranks);
    const ref = get_encoding(name as TiktokenEncoding);
    try {
      let checked = 0;
      for (let rank = 0; rank <= table.maxRank; rank++) {
        if (!table.has(rank)) continue;
        const ours = table.bytesOf(rank);
        const theirs = ref.decode_single_token_bytes(rank);
        if (Buffer.compare(Buffer.from(ours), Buffer.from(theirs)) !== 0) expect(Array.from(ours), `rank ${rank}`).toEqual(Array.from(theirs));
        if (table.get(ours, 0, ours.length) !== rank) expect(table.get(ours, 0, ours.length), `lookup of rank ${rank}`).toBe(rank);
        checked++;
      }
      expect(checked).toBe(table.size);
      for (const id of Object.values(file.default.special_tokens)) expect(table.has(id)).toBe(false);
    } finally {
      ref.free();
    }
  });
});

describe("RankTable", () => {
  const table = new RankTable(gpt2Ranks.bpe_ranks);

  it("looks up byte ranges inside a larger buffer and misses absent ones", () => {
    const buf = new TextEncoder().encode("xx hello world");
    expect(table.get(buf, 2, 8)).toBe(23748); // " hello"
    expect(table.get(buf, 8, 14)).toBe(995); // " world"
    expect(table.get(buf, 2, 14)).toBe(NO_RANK);
    expect(table.get(new Uint8Array([0xff, 0xfe, 0xfd]), 0, 3)).toBe(NO_RANK);
    expect(table.size).toBe(50256);
    expect(table.maxRank).toBe(50255);
  });

  it("rejects malformed rank files", () => {
    expect(() => new RankTable("! 0 IQ= Ig==")).toThrow(/base64/);
    expect(() => new RankTable("! x IQ==")).toThrow(/bad rank line/);
    expect(() => new RankTable("! 0 IQ== IQ==")).toThrow(/duplicate/);
    expect(() => new RankTable("! 0 IQ== Ig==")).toThrow(/no rank/);
  });
});
