// Open rows by free space: finds the row with the least free space that still fits a piece, in O(log length).

/**
 * A Fenwick tree over free capacities 1..length counts the open rows at each capacity, so the
 * smallest capacity ≥ n that has a row is found by one descent; a binary min-heap of row indices per
 * capacity makes the tie rule (lowest row index first) cheap. Rows are plain numbers: no objects
 * per row beyond one small array per distinct capacity.
 */
export class CapacityIndex {
  private readonly size: number;
  private readonly tree: Int32Array;
  private readonly topBit: number;
  private readonly rows = new Map<number, number[]>();
  private total = 0;

  constructor(length: number) {
    this.size = length;
    this.tree = new Int32Array(length + 1);
    this.topBit = 2 ** Math.floor(Math.log2(length));
  }

  get open(): number {
    return this.total;
  }

  /** Registers `row` as having `free` > 0 tokens of room. */
  add(row: number, free: number): void {
    let heap = this.rows.get(free);
    if (!heap) this.rows.set(free, (heap = []));
    heapPush(heap, row);
    this.bump(free, 1);
  }

  /** Removes and returns the row with the smallest free capacity ≥ `need` (lowest row index among equals), or −1. */
  takeBest(need: number): number {
    const target = this.prefix(need - 1) + 1;
    if (target > this.total) return -1;
    // Smallest capacity c with prefix(c) ≥ target (standard Fenwick descent).
    let pos = 0;
    let rest = target;
    for (let step = this.topBit; step > 0; step >>= 1) {
      const next = pos + step;
      if (next <= this.size && this.tree[next] < rest) {
        pos = next;
        rest -= this.tree[next];
      }
    }
    const free = pos + 1;
    const heap = this.rows.get(free)!;
    const row = heapPop(heap);
    if (heap.length === 0) this.rows.delete(free);
    this.bump(free, -1);
    return row;
  }

  /** Forgets every open row (cost proportional to the distinct capacities in use, not to `length`). */
  clear(): void {
    for (const [free, heap] of this.rows) this.bump(free, -heap.length);
    this.rows.clear();
  }

  private bump(free: number, by: number): void {
    this.total += by;
    for (let i = free; i <= this.size; i += i & -i) this.tree[i] += by;
  }

  private prefix(c: number): number {
    let s = 0;
    for (let i = c; i > 0; i -= i & -i) s += this.tree[i];
    return s;
  }
}

function heapPush(h: number[], v: number): void {
  let i = h.length;
  h.push(v);
  while (i > 0) {
    const p = (i - 1) >> 1;
    if (h[p] <= v) break;
    h[i] = h[p];
    i = p;
  }
  h[i] = v;
}

function heapPop(h: number[]): number {
  const top = h[0];
  const last = h.pop()!;
  if (h.length > 0) {
    let i = 0;
    for (;;) {
      const l = 2 * i + 1;
      if (l >= h.length) break;
      const c = l + 1 < h.length && h[l + 1] < h[l] ? l + 1 : l;
      if (h[c] >= last) break;
      h[i] = h[c];
      i = c;
    }
    h[i] = last;
  }
  return top;
}
