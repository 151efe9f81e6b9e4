// The token-id cache file: entries written (in background chunks) come back by line, and a changed text misses.
import { describe, expect, it } from "vitest";
import { mkdtempSync, statSync } from "node:fs";
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

  it("keeps ids below 65,536 in 2 bytes and an entry with a larger id in 4, each read back as written", async () => {
    const path = join(mkdtempSync(join(tmpdir(), "siftpack-tokens-")), "t.bin");
    const w = new TokenStoreWriter(path);
    const narrow = Uint32Array.from({ length: 1000 }, (_, j) => (j * 977) % 65536);
    narrow[999] = 65535;
    const wide = Uint32Array.from({ length: 1000 }, (_, j) => (j * 977) % 65536);
    wide[500] = 65536;
    w.add(1, 11n, narrow);
    w.add(2, 22n, wide);
    w.add(3, 33n, new Uint32Array(0));
    await w.close();
    expect(statSync(path).size).toBe(16 + 2 * 1000 + 16 + 4 * 1000 + 16);
    const r = new TokenStoreReader(path);
    expect(r.find(1, 11n)).toEqual(narrow);
    expect(r.find(2, 22n)).toEqual(wide);
    expect(r.find(3, 33n)).toEqual(new Uint32Array(0));
    r.close();
  });
});
