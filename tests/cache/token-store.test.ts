// The token-id cache file: entries written (in background chunks) come back by line, and a changed text misses.
import { describe, expect, it } from "vitest";
import { mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { TokenStoreReader, TokenStoreWriter } from "../../src/cache/token-store.js";

describe("token store", () => {
  it("gives back every entry across many 1 MiB chunks, and none for a changed text hash", async () => {
    const path = join(mkdtempSync(join(tmpdir(), "siftpack-tokens-")), "t.bin");
    const w = new TokenStoreWriter(path);
    const idsOf = (line: number) => Uint32Array.from({ length: (line * 37) % 5000 }, (_, j) => (line * 7919 + j) % 200_000);
    // About 25 MB of ids: many chunks, so writes wait behind the backlog.
    for (let line = 1; line <= 2600; line++) {
      w.add(line, BigInt(line) * 0x9e3779b97f4a7c15n % 2n ** 64n, idsOf(line));
      if (w.backlog > 0) await w.settle();
    }
    w.add(9000, 1n, Uint32Array.from({ length: 600_000 }, (_, j) => j)); // larger than a chunk
    await w.close();
    const r = new TokenStoreReader(path);
    for (let line = 1; line <= 2600; line += 7) expect(r.find(line, BigInt(line) * 0x9e3779b97f4a7c15n % 2n ** 64n)).toEqual(idsOf(line));
    expect(r.find(9000, 2n)).toBeUndefined();
    r.close();
    const again = new TokenStoreReader(path);
    expect(again.find(9000, 1n)?.length).toBe(600_000);
    again.close();
  });
});
