// Growable typed arrays: append-only columns of numbers without per-element objects (4 bytes an
// entry for 32-bit columns instead of a JS array's 8), shared by the dedup, overlap and statistics code.

type Typed = Int32Array | Uint32Array | Uint8Array;

export class Grow<T extends Typed> {
  private data: T;
  length = 0;

  constructor(private readonly make: (n: number) => T) {
    this.data = make(256);
  }

  push(x: number): void {
    if (this.length === this.data.length) {
      const next = this.make(this.data.length * 2);
      next.set(this.data as any);
      this.data = next;
    }
    this.data[this.length++] = x;
  }

  /** Appends all of `xs`. */
  append(xs: ArrayLike<number>): void {
    if (this.length + xs.length > this.data.length) {
      const next = this.make(Math.max(this.data.length * 2, this.length + xs.length));
      next.set(this.data.subarray(0, this.length) as any);
      this.data = next;
    }
    this.data.set(xs as any, this.length);
    this.length += xs.length;
  }

  get(i: number): number {
    return this.data[i];
  }

  set(i: number, x: number): void {
    this.data[i] = x;
  }

  /** The filled part, without copying (valid until the next push). */
  view(): T {
    return this.data.subarray(0, this.length) as T;
  }
}

export const int32s = () => new Grow((n) => new Int32Array(n));
export const uint32s = () => new Grow((n) => new Uint32Array(n));
export const bytes = () => new Grow((n) => new Uint8Array(n));
