// A growable Int32Array: per-document numbers (text length, source, flags) at 4 bytes each instead of a JS array's 8.

export class GrowInt32 {
  private data = new Int32Array(1024);
  length = 0;

  push(v: number): void {
    if (this.length === this.data.length) {
      const next = new Int32Array(this.data.length * 2);
      next.set(this.data);
      this.data = next;
    }
    this.data[this.length++] = v;
  }

  get(i: number): number {
    return this.data[i];
  }

  /** The filled part (a view; valid until the next push). */
  view(): Int32Array {
    return this.data.subarray(0, this.length);
  }
}
