// clusters.jsonl: one JSON line per near-duplicate cluster, its members and which one was kept.
import { closeSync, openSync, writeSync } from "node:fs";
import { forEachCluster } from "./clusters.js";
import type { UnionFind } from "./union-find.js";

export interface ClusterFields {
  clusterId(d: number): string;
  source(d: number): string;
  id(d: number): string;
  /** Signature-estimated Jaccard similarity to the kept record (1 for the kept one). */
  similarity(d: number): number;
  /** Exact Jaccard to the kept record, when the stage confirms exactly. */
  jaccard?(d: number): number;
  /** The record had no shingle and was matched as an exact duplicate. */
  short(d: number): boolean;
}

const round4 = (x: number) => Math.round(x * 10000) / 10000;

/**
 * Writes the file: clusters in the order of their first member, members in input order, e.g.
 * `{"cluster":"tickets/T-7","size":2,"basis":"minhash","kept":{"source":"tickets","id":"T-7"},
 *   "members":[{"source":"tickets","id":"T-7","similarity":1,"kept":true},{"source":"tickets","id":"T-90","similarity":0.8828}]}`.
 * `basis` is "exact" for texts shorter than one shingle, which only match their exact duplicates.
 * Synchronous, buffered writes: nothing else runs while the stage is between its passes.
 */
export function writeClusters(path: string, uf: UnionFind, keptOf: Int32Array, f: ClusterFields): void {
  const fd = openSync(path, "w");
  try {
    let parts: string[] = [];
    let size = 0;
    const flush = () => {
      const buf = Buffer.from(parts.join(""), "utf8");
      let off = 0;
      while (off < buf.length) off += writeSync(fd, buf, off, buf.length - off);
      parts = [];
      size = 0;
    };
    forEachCluster(uf, keptOf, (members) => {
      const kept = keptOf[members[0]];
      const line = JSON.stringify({
        cluster: f.clusterId(kept),
        size: members.length,
        basis: f.short(kept) ? "exact" : "minhash",
        kept: { source: f.source(kept), id: f.id(kept) },
        members: members.map((d) => ({
          source: f.source(d),
          id: f.id(d),
          similarity: round4(f.similarity(d)),
          ...(f.jaccard ? { jaccard: round4(f.jaccard(d)) } : {}),
          ...(d === kept ? { kept: true } : {}),
        })),
      });
      parts.push(line, "\n");
      size += line.length;
      if (size > 1 << 22) flush();
    });
    flush();
  } finally {
    closeSync(fd);
  }
}
