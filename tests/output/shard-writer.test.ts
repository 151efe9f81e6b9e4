// The shard writer's buffers start small and grow as rows come: every row must land in its shard
// whole and in order, across the growth steps and the shard boundary.
import { describe, expect, it } from "vitest";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { ShardWriter } from "../../src/output/shard-writer.js";

/** The uint32 body of a version 1 .npy file (header length in bytes 8–9, NumPy's format description). */
function npyBody(path: string): Uint32Array {
  const b = readFileSync(path);
  const start = 10 + b.readUInt16LE(8);
  return new Uint32Array(b.buffer.slice(b.byteOffset + start, b.byteOffset + b.length));
}

describe("shard writer", () => {
  it("keeps every row, in order, while its buffers grow and a shard fills", async () => {
    const dir = mkdtempSync(join(tmpdir(), "siftpack-shards-"));
    const L = 8;
    const w = new ShardWriter({ outDir: dir, split: "train", length: L, shardBlocks: 1500, tokenDtype: "uint32", segmentDtype: "uint32", emit: [] });
    const rows = 2300; // 256 → 1024 → 1500 rows, a full shard, then 800 more
    for (let r = 0; r < rows; r++) {
      w.addRow(Uint32Array.from({ length: L }, (_, i) => r * L + i), new Uint32Array(L).fill(1 + (r % 3)));
      if (w.pending > 0) await w.writePending();
    }
    await w.finish();
    expect(w.stats.shards.map((s) => s.blocks)).toEqual([1500, 800]);
    const tokens = [...npyBody(join(dir, "train/000000.tokens.npy")), ...npyBody(join(dir, "train/000001.tokens.npy"))];
    expect(tokens).toEqual(Array.from({ length: rows * L }, (_, i) => i));
    const segments = npyBody(join(dir, "train/000001.segments.npy"));
    expect(segments[0]).toBe(1 + (1500 % 3));
  });
});
