// Clusters: confirming candidate pairs from shared buckets, joining them, choosing the record each cluster keeps.
import { UnionFind } from "./union-find.js";

/**
 * Within one bucket, how many of its first documents each member is checked against. A bucket of
 * up to this size is checked pair by pair (skipping pairs already joined); in a larger one the
 * later members meet only the first ones. Buckets that large are nearly always copies of one text,
 * which all join the first member at one comparison each, so the cap bounds the work of boilerplate
 * without losing real pairs in practice (the recall test on real text measures it).
 */
export const WINDOW = 64;

/**
 * Joins the confirmed pairs of one bucket (`group`, documents in ascending order). A pair already in
 * one set is skipped without a comparison. Returns the number of comparisons made.
 */
export function joinBucket(group: Int32Array, uf: UnionFind, similar: (a: number, b: number) => boolean): number {
  let compared = 0;
  for (let i = 1; i < group.length; i++) {
    const d = group[i];
    const upto = Math.min(i, WINDOW);
    for (let j = 0; j < upto; j++) {
      const e = group[j];
      if (e === d || uf.find(e) === uf.find(d)) continue;
      compared++;
      if (similar(d, e)) uf.union(d, e);
    }
  }
  return compared;
}

export type KeepRule = "first" | "longest" | "source-priority";

export interface Kept {
  /** Per document: the document its cluster keeps, or −1 when it is in no cluster (alone). */
  keptOf: Int32Array;
  /** Clusters of two or more documents. */
  clusters: number;
  /** Documents in clusters that are not the kept one. */
  duplicates: number;
}

/** The number of documents in each set, at its root (0 elsewhere). */
export function clusterSizes(uf: UnionFind): Int32Array {
  const size = new Int32Array(uf.parent.length);
  for (let d = 0; d < size.length; d++) size[uf.find(d)]++;
  return size;
}

/**
 * Picks one document per set (`size`: clusterSizes, when the caller has it already): the first in input order (`first`), the longest text with ties to the
 * first (`longest`), or the one whose source comes earliest in the priority list, ties to the first
 * (`source-priority`; `rank[d]` is that position, sources not listed rank last). Every rule ends in
 * input order, so the choice is deterministic.
 */
export function chooseKept(uf: UnionFind, rule: KeepRule, length: Int32Array, rank: Int32Array, size: Int32Array = clusterSizes(uf)): Kept {
  const n = uf.parent.length;
  const best = new Int32Array(n).fill(-1);
  for (let d = 0; d < n; d++) {
    const r = uf.find(d);
    const b = best[r];
    if (b < 0) best[r] = d;
    else if (rule === "longest" ? length[d] > length[b] : rule === "source-priority" ? rank[d] < rank[b] : false) best[r] = d;
  }
  const keptOf = new Int32Array(n);
  let clusters = 0;
  let duplicates = 0;
  for (let d = 0; d < n; d++) {
    const r = uf.find(d);
    if (size[r] < 2) keptOf[d] = -1;
    else {
      keptOf[d] = best[r];
      if (r === d) clusters++;
      if (best[r] !== d) duplicates++;
    }
  }
  return { keptOf, clusters, duplicates };
}

/**
 * The clusters' members in file order: clusters by their first member (the set's root is its
 * smallest document), members in input order. Calls `each(members)` once per cluster.
 */
export function forEachCluster(uf: UnionFind, keptOf: Int32Array, each: (members: number[]) => void): void {
  const n = keptOf.length;
  const next = new Int32Array(n).fill(-1);
  const last = new Int32Array(n).fill(-1);
  for (let d = 0; d < n; d++) {
    if (keptOf[d] < 0) continue;
    const r = uf.find(d);
    if (last[r] >= 0) next[last[r]] = d;
    last[r] = d;
  }
  for (let r = 0; r < n; r++) {
    if (keptOf[r] < 0 || uf.find(r) !== r) continue;
    const members: number[] = [];
    for (let d = r; d >= 0; d = next[d]) members.push(d);
    each(members);
  }
}
