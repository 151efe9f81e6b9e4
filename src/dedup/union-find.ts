// Union-find over document numbers 0..n-1: joins confirmed near-duplicate pairs into clusters.

/**
 * Disjoint sets on an Int32Array (4 bytes a document). The smaller root always becomes the parent,
 * so a set's root is its first document in input order whatever order the unions come in; path
 * halving keeps finds short.
 */
export class UnionFind {
  readonly parent: Int32Array;

  constructor(n: number) {
    this.parent = new Int32Array(n);
    for (let i = 0; i < n; i++) this.parent[i] = i;
  }

  find(x: number): number {
    const p = this.parent;
    while (p[x] !== x) {
      p[x] = p[p[x]];
      x = p[x];
    }
    return x;
  }

  /** Joins the sets of a and b; returns false when they were already one set. */
  union(a: number, b: number): boolean {
    const ra = this.find(a);
    const rb = this.find(b);
    if (ra === rb) return false;
    if (ra < rb) this.parent[rb] = ra;
    else this.parent[ra] = rb;
    return true;
  }
}
