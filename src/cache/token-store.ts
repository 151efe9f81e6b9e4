// Cached token ids of one input file's records: a flat binary file of entries
// [u32 line][u32 count | NARROW][u64 xxh64 of the text][count × u16 or u32 id], in the order the
// records reached the tokenizer. An entry whose ids all fit 16 bits (every id of a vocabulary below
// 65,536, as GPT-2's) keeps them in 2 bytes each and sets NARROW in its count: half the room. An entry is used only if the text still hashes the same, so stages that change
// text (or a changed input file) invalidate exactly the records whose text changed.
import { closeSync, openSync, readSync, write } from "node:fs";
import { promisify } from "node:util";

/** Bytes before an entry's ids: line, count, text hash. */
const HEAD = 16;
/** Set in an entry's count when its ids are 16-bit. */
const NARROW = 0x80000000;

/** Reads entries in order; `find(line)` skips forward to a line and returns its ids if present. */
export class TokenStoreReader {
  private readonly fd: number;
  private buf = Buffer.alloc(1 << 20);
  private start = 0;
  private end = 0;
  private pos = 0;
  private eof = false;

  constructor(path: string) {
    this.fd = openSync(path, "r");
  }

  /** Makes at least n bytes available at `start`; false at end of file. */
  private fill(n: number): boolean {
    if (this.end - this.start >= n) return true;
    if (this.eof) return false;
    if (n > this.buf.length) {
      const bigger = Buffer.alloc(Math.max(n, this.buf.length * 2));
      this.buf.copy(bigger, 0, this.start, this.end);
      this.end -= this.start;
      this.start = 0;
      this.buf = bigger;
    } else if (this.start > 0) {
      this.buf.copy(this.buf, 0, this.start, this.end);
      this.end -= this.start;
      this.start = 0;
    }
    while (this.end - this.start < n) {
      const got = readSync(this.fd, this.buf, this.end, this.buf.length - this.end, this.pos);
      if (got === 0) {
        this.eof = true;
        return false;
      }
      this.pos += got;
      this.end += got;
    }
    return true;
  }

  private peekLine(): number | undefined {
    return this.fill(HEAD) ? this.buf.readUInt32LE(this.start) : undefined;
  }

  find(line: number, textHash: bigint): Uint32Array | undefined {
    for (;;) {
      const at = this.peekLine();
      if (at === undefined || at > line) return undefined;
      const word = this.buf.readUInt32LE(this.start + 4);
      const count = (word & ~NARROW) >>> 0;
      const width = word & NARROW ? 2 : 4;
      if (!this.fill(HEAD + count * width)) return undefined;
      const hash = this.buf.readBigUInt64LE(this.start + 8);
      const from = this.start + HEAD;
      this.start += HEAD + count * width;
      if (at === line) {
        if (hash !== textHash) return undefined;
        if (width === 4) {
          const out = new Uint32Array(count);
          new Uint8Array(out.buffer).set(this.buf.subarray(from, from + count * 4));
          return out;
        }
        const narrow = new Uint16Array(count);
        new Uint8Array(narrow.buffer).set(this.buf.subarray(from, from + count * 2));
        return Uint32Array.from(narrow);
      }
    }
  }

  close(): void {
    closeSync(this.fd);
  }
}

/**
 * Writes entries; full 1 MiB chunks go to disk in the background (the build thread goes on
 * tokenizing), at most `BACKLOG` of them waiting: `settle()` waits when more are, `close()` for all.
 */
export class TokenStoreWriter {
  private readonly fd: number;
  private chunk = Buffer.allocUnsafe(CHUNK);
  private used = 0;
  private writes: Promise<void> = Promise.resolve();
  private waiting = 0;
  private failure: unknown;

  constructor(path: string) {
    this.fd = openSync(path, "w");
  }

  /** Chunks written or being written in the background. */
  get backlog(): number {
    return this.waiting;
  }

  add(line: number, textHash: bigint, ids: Uint32Array): void {
    if (this.failure) throw this.failure;
    let max = 0;
    for (let i = 0; i < ids.length; i++) if (ids[i] > max) max = ids[i];
    const width = max < 0x10000 ? 2 : 4;
    const need = HEAD + ids.length * width;
    if (this.used + need > this.chunk.length) this.flush();
    if (need > this.chunk.length) this.chunk = Buffer.allocUnsafe(need);
    this.chunk.writeUInt32LE(line, this.used);
    this.chunk.writeUInt32LE((ids.length | (width === 2 ? NARROW : 0)) >>> 0, this.used + 4);
    this.chunk.writeBigUInt64LE(textHash, this.used + 8);
    const body = new Uint8Array(this.chunk.buffer, this.chunk.byteOffset + this.used + HEAD, ids.length * width);
    if (width === 4) body.set(new Uint8Array(ids.buffer, ids.byteOffset, ids.byteLength));
    else body.set(new Uint8Array(Uint16Array.from(ids).buffer));
    this.used += need;
  }

  /** Waits while more than BACKLOG chunks are still to be written. */
  async settle(): Promise<void> {
    if (this.waiting > BACKLOG) await this.writes;
    if (this.failure) throw this.failure;
  }

  private flush(): void {
    if (this.used === 0) return;
    const bytes = this.chunk.subarray(0, this.used);
    this.chunk = Buffer.allocUnsafe(CHUNK);
    this.used = 0;
    this.waiting++;
    this.writes = this.writes
      .then(() => writeAll(this.fd, bytes))
      .catch((e: unknown) => void (this.failure ??= e))
      .finally(() => void this.waiting--);
  }

  /** Writes what is left and closes the file; throws a write's error. */
  async close(): Promise<void> {
    this.flush();
    await this.writes;
    closeSync(this.fd);
    if (this.failure) throw this.failure;
  }
}

const CHUNK = 1 << 20;
const BACKLOG = 4;
const writeAsync = promisify(write);

async function writeAll(fd: number, bytes: Uint8Array): Promise<void> {
  for (let off = 0; off < bytes.length; ) off += (await writeAsync(fd, bytes, off, bytes.length - off)).bytesWritten;
}
