// Signatures of every document, k values each: held in memory up to a budget, the oldest spilled to a flat file.
import { closeSync, openSync, readSync, writeSync } from "node:fs";
import { join } from "node:path";

const CHUNK_ROWS = 1024;

/**
 * Rows [0, onDisk) live in `signatures.bin` at offset row·k·4; rows from `onDisk` on live in memory
 * chunks of 1024 rows. When the chunks pass the budget, the full ones are appended to the file, so
 * the file always holds a prefix of the rows. Reading a row on disk is one pread (the page cache
 * serves the repeated reads of pass 1's candidate checks).
 */
export class SignatureStore {
  readonly k: number;
  private readonly chunks: Uint32Array[] = [];
  private filledInLast = CHUNK_ROWS;
  private onDisk = 0;
  private rows = 0;
  private fd: number | undefined;
  private readonly path: string;
  private readonly maxChunks: number;

  constructor(k: number, budgetBytes: number, dir: string) {
    this.k = k;
    this.path = join(dir, "signatures.bin");
    this.maxChunks = Math.max(2, Math.floor(budgetBytes / (CHUNK_ROWS * k * 4)));
  }

  get size(): number {
    return this.rows;
  }
  get spilledRows(): number {
    return this.onDisk;
  }

  /** Appends `count` rows from `values` (count × k). */
  append(values: Uint32Array, count: number): void {
    const k = this.k;
    for (let i = 0; i < count; i++) {
      if (this.filledInLast === CHUNK_ROWS) {
        if (this.chunks.length >= this.maxChunks) this.spill();
        this.chunks.push(new Uint32Array(CHUNK_ROWS * k));
        this.filledInLast = 0;
      }
      this.chunks[this.chunks.length - 1].set(values.subarray(i * k, (i + 1) * k), this.filledInLast * k);
      this.filledInLast++;
      this.rows++;
    }
  }

  private spill(): void {
    this.fd ??= openSync(this.path, "w+");
    const bytesPerRow = this.k * 4;
    for (const c of this.chunks) {
      const bytes = new Uint8Array(c.buffer, c.byteOffset, c.byteLength);
      let off = 0;
      while (off < bytes.length) off += writeSync(this.fd, bytes, off, bytes.length - off, this.onDisk * bytesPerRow + off);
      this.onDisk += CHUNK_ROWS;
    }
    this.chunks.length = 0;
  }

  /** Row `d`: a view into memory, or read from disk into `scratch` (length ≥ k) and returned. */
  row(d: number, scratch: Uint32Array): Uint32Array {
    const k = this.k;
    if (d >= this.onDisk) {
      const i = d - this.onDisk;
      const c = this.chunks[Math.floor(i / CHUNK_ROWS)];
      const at = (i % CHUNK_ROWS) * k;
      return c.subarray(at, at + k);
    }
    const bytes = new Uint8Array(scratch.buffer, scratch.byteOffset, k * 4);
    let got = 0;
    while (got < bytes.length) {
      const n = readSync(this.fd!, bytes, got, bytes.length - got, d * k * 4 + got);
      if (n === 0) throw new Error("dedup: the signature file ended early");
      got += n;
    }
    return scratch.subarray(0, k);
  }

  close(): void {
    if (this.fd !== undefined) closeSync(this.fd);
    this.fd = undefined;
  }
}
