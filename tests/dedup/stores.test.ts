// The bounded stores of pass 1: band buckets (sorted runs on disk, merged), signatures and records with spill; union-find.
import { mkdtempSync, rmSync, existsSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterEach, describe, expect, it } from "vitest";
import fc from "fast-check";
import { BandBuckets } from "../../src/dedup/buckets.js";
import { SignatureStore } from "../../src/dedup/signature-store.js";
import { RecordStore } from "../../src/dedup/record-store.js";
import { UnionFind } from "../../src/dedup/union-find.js";
import { rec } from "./harness.js";

const dirs: string[] = [];
const tmp = () => {
  const d = mkdtempSync(join(tmpdir(), "siftpack-stores-"));
  dirs.push(d);
  return d;
};
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

/** The buckets as a plain Map would group them: key "hash/band" → documents in ascending order, two or more. */
function reference(entries: [number, number, number][]): number[][] {
  const m = new Map<string, number[]>();
  for (const [key, band, doc] of entries) {
    const k = `${key >>> 0}/${band & 15}`;
    m.set(k, [...(m.get(k) ?? []), doc]);
  }
  return [...m.values()].filter((g) => g.length >= 2).map((g) => g.sort((a, b) => a - b));
}

function groupsOf(b: BandBuckets): number[][] {
  const out: number[][] = [];
  for (const g of b.groups()) out.push(Array.from(g));
  return out;
}

const canon = (gs: number[][]) => gs.map((g) => g.join(",")).sort();

describe("band buckets", () => {
  it("group the same documents whether they stay in memory or spill to many sorted runs", () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.nat({ max: 40 }), fc.nat({ max: 20 })), { minLength: 0, maxLength: 3000 }),
        fc.integer({ min: 1, max: 5 }),
        (raw, keySpread) => {
          // Few distinct keys so that buckets fill up; keys spread over the full 32 bits too.
          const entries = raw.map(([k, band], doc) => [Math.imul(k, 0x9e3779b1 * keySpread) >>> 0, band, doc] as [number, number, number]);
          const expected = canon(reference(entries));
          const small = new BandBuckets(8 * 1024, tmp()); // 1024 entries: spills every 1024
          const large = new BandBuckets(1 << 24, tmp());
          for (const [key, band, doc] of entries) {
            small.add(key, band, doc);
            large.add(key, band, doc);
          }
          expect(small.spilledRuns).toBe(Math.floor(Math.max(0, entries.length - 1) / 1024));
          expect(large.spilledRuns).toBe(0);
          const gs = groupsOf(small);
          const gl = groupsOf(large);
          small.close();
          large.close();
          expect(canon(gs)).toEqual(expected);
          expect(canon(gl)).toEqual(expected);
          for (const g of gs) expect([...g].sort((a, b) => a - b)).toEqual(g);
        },
      ),
      { numRuns: 60 },
    );
  });

  it("reject a document number beyond 28 bits", () => {
    const b = new BandBuckets(1 << 16, tmp());
    expect(() => b.add(1, 0, 2 ** 28)).toThrow(/more than/);
  });
});

describe("signature store", () => {
  it("returns every row, from memory or from the spill file", () => {
    const k = 16;
    const dir = tmp();
    const s = new SignatureStore(k, 2 * 1024 * k * 4, dir); // two chunks of 1024 rows in memory
    const n = 5000;
    const all = Uint32Array.from({ length: n * k }, (_, i) => Math.imul(i, 2654435761) >>> 0);
    for (let at = 0; at < n; at += 700) s.append(all.subarray(at * k, Math.min(n, at + 700) * k), Math.min(700, n - at));
    expect(s.size).toBe(n);
    expect(s.spilledRows).toBeGreaterThan(0);
    expect(existsSync(join(dir, "signatures.bin"))).toBe(true);
    const scratch = new Uint32Array(k);
    for (const d of [0, 1, 1023, 1024, 2047, 3000, 4095, 4096, 4999]) expect(Array.from(s.row(d, scratch))).toEqual(Array.from(all.subarray(d * k, (d + 1) * k)));
    s.close();
  });
});

describe("record store", () => {
  it("gives back every record, in order and one by one, after spilling", () => {
    const dir = tmp();
    const s = new RecordStore(20_000, dir);
    const records = Array.from({ length: 300 }, (_, i) => {
      const r = rec(i, `record ${i} – “quoted”, line\nbreak, émoji 🚋 ${"x".repeat(i)}`, i % 2 ? "a" : "b");
      if (i % 7 === 0) r.tokens = Uint32Array.from([i, i + 1, 50256]);
      return r;
    });
    for (const r of records) s.add(r);
    expect(s.spilledRecords).toBeGreaterThan(100);
    expect(s.spilledRecords).toBeLessThan(300);
    expect([...s.all()]).toEqual(records);
    for (const d of [0, 1, 150, s.spilledRecords - 1, s.spilledRecords, 299]) expect(s.get(d)).toEqual(records[d]);
    s.close();
  });
});

describe("union-find", () => {
  it("joins sets and makes the smallest member the root", () => {
    const uf = new UnionFind(10);
    expect(uf.union(7, 3)).toBe(true);
    expect(uf.union(3, 9)).toBe(true);
    expect(uf.union(9, 7)).toBe(false);
    uf.union(5, 9);
    expect([3, 5, 7, 9].map((x) => uf.find(x))).toEqual([3, 3, 3, 3]);
    expect(uf.find(4)).toBe(4);
  });
});
