// Band buckets: (band key, document) entries held in a bounded buffer, spilled to disk as sorted runs and merged into groups.
import { closeSync, openSync, readSync, writeSync } from "node:fs";
import { join } from "node:path";

// An entry is one unsigned 64-bit integer: the band key's 32 hash bits on top, then 4 bits of the
// band number, then 28 bits of document number. Sorting the entries (natively, as a BigUint64Array)
// brings every bucket's documents together, in input order. Within one band a bucket is 32 hash
// bits: two unrelated documents share one by chance with probability 2⁻³², which only adds a
// signature comparison. 28 bits cap a run at 268 million documents.
export const MAX_DOCUMENTS = 2 ** 28;
const DOC_MASK = MAX_DOCUMENTS - 1;
const LE = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;
/** Index of the low and high 32-bit halves of entry i in a Uint32Array view: 2i + LO, 2i + HI. */
const LO = LE ? 0 : 1;
const HI = LE ? 1 : 0;
const ENTRY_BYTES = 8;

/** Reads one sorted run back in chunks. */
class RunReader {
  private readonly words: Uint32Array;
  private readonly bytes: Uint8Array;
  private filled = 0;
  private pos = 0;
  private offset = 0;
  private done = false;

  constructor(
    private readonly fd: number,
    private readonly start: number,
    private readonly length: number,
    chunkEntries: number,
  ) {
    this.words = new Uint32Array(chunkEntries * 2);
    this.bytes = new Uint8Array(this.words.buffer);
    this.refill();
  }

  private refill(): void {
    const want = Math.min(this.bytes.length, this.length - this.offset);
    let got = 0;
    while (got < want) {
      const n = readSync(this.fd, this.bytes, got, want - got, this.start + this.offset + got);
      if (n === 0) throw new Error("dedup: a bucket run file ended early");
      got += n;
    }
    this.offset += got;
    this.filled = got / ENTRY_BYTES;
    this.pos = 0;
    this.done = got === 0;
  }

  get exhausted(): boolean {
    return this.done;
  }
  get hi(): number {
    return this.words[2 * this.pos + HI];
  }
  get lo(): number {
    return this.words[2 * this.pos + LO];
  }
  advance(): void {
    if (++this.pos >= this.filled) this.refill();
  }
}

/** Reads the in-memory sorted tail the same way as a run. */
class MemoryReader {
  private pos = 0;
  constructor(
    private readonly words: Uint32Array,
    private readonly count: number,
  ) {}
  get exhausted(): boolean {
    return this.pos >= this.count;
  }
  get hi(): number {
    return this.words[2 * this.pos + HI];
  }
  get lo(): number {
    return this.words[2 * this.pos + LO];
  }
  advance(): void {
    this.pos++;
  }
}

type Reader = RunReader | MemoryReader;

function less(a: Reader, b: Reader): boolean {
  return a.hi !== b.hi ? a.hi < b.hi : a.lo < b.lo;
}

export class BandBuckets {
  private big: BigUint64Array;
  private words: Uint32Array;
  private count = 0;
  private readonly capacity: number;
  private readonly path: string;
  private fd: number | undefined;
  private fileBytes = 0;
  /** Byte ranges of the sorted runs in the spill file. */
  private readonly runs: { start: number; length: number }[] = [];

  /** `budgetBytes` bounds the entry buffer (8 bytes an entry) and, later, the merge's read buffers. */
  constructor(
    private readonly budgetBytes: number,
    dir: string,
  ) {
    this.capacity = Math.max(1024, Math.floor(budgetBytes / ENTRY_BYTES));
    this.big = new BigUint64Array(Math.min(this.capacity, 1 << 16));
    this.words = new Uint32Array(this.big.buffer);
    this.path = join(dir, "buckets.bin");
  }

  /** Runs written to disk so far. */
  get spilledRuns(): number {
    return this.runs.length;
  }

  /** Adds document `doc` to the bucket (`key`, band): key is 32 bits, only band's low 4 bits are kept. */
  add(key: number, band: number, doc: number): void {
    if (doc >= MAX_DOCUMENTS) throw new RangeError(`dedup: more than ${MAX_DOCUMENTS} documents in one run`);
    if (this.count === this.big.length) this.grow();
    const i = this.count++;
    this.words[2 * i + HI] = key;
    this.words[2 * i + LO] = (((band & 15) << 28) | doc) >>> 0;
  }

  private grow(): void {
    if (this.big.length < this.capacity) {
      const next = new BigUint64Array(Math.min(this.capacity, this.big.length * 2));
      next.set(this.big);
      this.big = next;
      this.words = new Uint32Array(next.buffer);
      return;
    }
    this.spill();
  }

  private spill(): void {
    const sorted = this.big.subarray(0, this.count).sort();
    this.fd ??= openSync(this.path, "w+");
    const bytes = new Uint8Array(sorted.buffer, sorted.byteOffset, this.count * ENTRY_BYTES);
    let off = 0;
    while (off < bytes.length) off += writeSync(this.fd, bytes, off, bytes.length - off, this.fileBytes + off);
    this.runs.push({ start: this.fileBytes, length: bytes.length });
    this.fileBytes += bytes.length;
    this.count = 0;
  }

  /**
   * Every bucket with two or more documents, as the documents in ascending order. The yielded array is
   * reused: consume it before asking for the next group. Ends the table.
   */
  *groups(): Generator<Int32Array> {
    this.big.subarray(0, this.count).sort();
    const readers: Reader[] = [new MemoryReader(this.words, this.count)];
    if (this.runs.length > 0) {
      // The sorted tail keeps its memory; the runs share the rest of the budget for read buffers.
      const free = Math.max(this.budgetBytes - this.count * ENTRY_BYTES, 0);
      const chunk = Math.max(4096, Math.floor(free / ENTRY_BYTES / this.runs.length));
      for (const r of this.runs) readers.push(new RunReader(this.fd!, r.start, r.length, chunk));
    }
    // A binary min-heap over the readers' current entries (k-way merge).
    const heap = readers.filter((r) => !r.exhausted);
    const down = (i: number) => {
      for (;;) {
        const l = 2 * i + 1;
        const r = l + 1;
        let m = i;
        if (l < heap.length && less(heap[l], heap[m])) m = l;
        if (r < heap.length && less(heap[r], heap[m])) m = r;
        if (m === i) return;
        [heap[i], heap[m]] = [heap[m], heap[i]];
        i = m;
      }
    };
    for (let i = (heap.length >> 1) - 1; i >= 0; i--) down(i);

    let group = new Int32Array(64);
    let size = 0;
    let keyHi = -1;
    let keyBand = -1;
    while (heap.length > 0) {
      const top = heap[0];
      const hi = top.hi;
      const lo = top.lo;
      top.advance();
      if (top.exhausted) {
        heap[0] = heap[heap.length - 1];
        heap.pop();
      }
      if (heap.length > 0) down(0);
      const band = lo >>> 28;
      if (hi !== keyHi || band !== keyBand) {
        if (size >= 2) yield group.subarray(0, size);
        size = 0;
        keyHi = hi;
        keyBand = band;
      }
      if (size === group.length) {
        const next = new Int32Array(size * 2);
        next.set(group);
        group = next;
      }
      group[size++] = lo & DOC_MASK;
    }
    if (size >= 2) yield group.subarray(0, size);
  }

  /** Closes the spill file (the caller removes the directory). */
  close(): void {
    if (this.fd !== undefined) closeSync(this.fd);
    this.fd = undefined;
  }
}
