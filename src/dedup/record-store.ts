// The records a two-pass stage holds between its passes: in memory up to a budget, then as JSON lines in a temporary file.
import { closeSync, openSync, readSync, writeSync } from "node:fs";
import { join } from "node:path";
import type { DocRecord } from "../types.js";

/** Rough heap size of a record: UTF-16 text plus ids, meta and object overhead. */
function estimateBytes(r: DocRecord): number {
  return 2 * (r.text.length + r.id.length + r.origin.file.length) + 64 * Object.keys(r.meta).length + 256 + (r.tokens ? r.tokens.byteLength : 0);
}

function serialize(r: DocRecord): string {
  return JSON.stringify(r.tokens ? { ...r, tokens: Array.from(r.tokens) } : r);
}

function parse(line: string): DocRecord {
  const r = JSON.parse(line) as DocRecord & { tokens?: unknown };
  if (Array.isArray(r.tokens)) r.tokens = Uint32Array.from(r.tokens as number[]);
  return r as DocRecord;
}

/**
 * Records [0, onDisk) are lines of `records.jsonl` (byte offsets kept, for reading one back);
 * later ones are in memory. Past the budget, everything in memory is appended to the file, so the
 * file always holds a prefix and reading it then memory gives input order.
 */
export class RecordStore {
  private memory: DocRecord[] = [];
  private memoryBytes = 0;
  private onDisk = 0;
  private offsets = new Float64Array(1024);
  private fileBytes = 0;
  private fd: number | undefined;
  private readonly path: string;

  constructor(
    private readonly budgetBytes: number,
    dir: string,
  ) {
    this.path = join(dir, "records.jsonl");
  }

  get size(): number {
    return this.onDisk + this.memory.length;
  }
  get spilledRecords(): number {
    return this.onDisk;
  }

  add(r: DocRecord): void {
    this.memory.push(r);
    this.memoryBytes += estimateBytes(r);
    if (this.memoryBytes > this.budgetBytes) this.spill();
  }

  private spill(): void {
    this.fd ??= openSync(this.path, "w+");
    const parts: string[] = [];
    let pending = 0;
    const flush = () => {
      const buf = Buffer.from(parts.join(""), "utf8");
      let off = 0;
      while (off < buf.length) off += writeSync(this.fd!, buf, off, buf.length - off, this.fileBytes + off);
      this.fileBytes += buf.length;
      parts.length = 0;
      pending = 0;
    };
    for (const r of this.memory) {
      const line = serialize(r) + "\n";
      if (this.onDisk + 1 >= this.offsets.length) {
        const next = new Float64Array(this.offsets.length * 2);
        next.set(this.offsets);
        this.offsets = next;
      }
      this.offsets[this.onDisk] = this.fileBytes + pending;
      this.onDisk++;
      parts.push(line);
      pending += Buffer.byteLength(line, "utf8");
      if (pending > 1 << 22) flush();
    }
    flush();
    this.offsets[this.onDisk] = this.fileBytes;
    this.memory = [];
    this.memoryBytes = 0;
  }

  /** Record `d` (a copy when it comes from disk). */
  get(d: number): DocRecord {
    if (d >= this.onDisk) return this.memory[d - this.onDisk];
    const start = this.offsets[d];
    const buf = Buffer.alloc(this.offsets[d + 1] - start);
    let got = 0;
    while (got < buf.length) {
      const n = readSync(this.fd!, buf, got, buf.length - got, start + got);
      if (n === 0) throw new Error("dedup: the record file ended early");
      got += n;
    }
    return parse(buf.toString("utf8", 0, buf.length - 1));
  }

  /** Every record in input order: the file in 4 MiB reads, then memory. */
  *all(): Generator<DocRecord> {
    if (this.onDisk > 0) {
      const chunk = Buffer.alloc(1 << 22);
      let carry: Buffer = Buffer.alloc(0);
      let pos = 0;
      while (pos < this.fileBytes) {
        const n = readSync(this.fd!, chunk, 0, Math.min(chunk.length, this.fileBytes - pos), pos);
        if (n === 0) throw new Error("dedup: the record file ended early");
        pos += n;
        const data = carry.length ? Buffer.concat([carry, chunk.subarray(0, n)]) : chunk.subarray(0, n);
        let start = 0;
        for (let nl = data.indexOf(10, start); nl >= 0; nl = data.indexOf(10, start)) {
          yield parse(data.toString("utf8", start, nl));
          start = nl + 1;
        }
        carry = Buffer.from(data.subarray(start));
      }
    }
    yield* this.memory;
  }

  close(): void {
    if (this.fd !== undefined) closeSync(this.fd);
    this.fd = undefined;
  }
}
