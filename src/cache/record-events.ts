// The unit files of a build's phases (and the read phase's cache entries), and the batches the worker
// threads take and give back: one binary frame per row of an input file (or part) — a record, a drop
// or a bad row — in row order, then an end frame. Binary, not JSON lines: text is copied as UTF-8
// without escaping and token ids as raw little-endian integers (2 bytes each when every id of the
// record fits), so a phase reads and writes records at memory speed instead of re-serialising them.
// Like every UTF-8 encoder, the frames carry a lone surrogate (which a JSON escape can put in a
// string) as U+FFFD; the tokenizers and hashes already saw it that way.
//
// Frame: u32 body length, then the body: a kind byte, then the kind's fields. Numbers are u32 or
// f64 (row numbers), strings a u32 byte length then UTF-8. A file ends with the end frame and a u32
// copy of that frame's length, so its counters can be read from the last bytes alone. A file (or part)
// that could not be read to its end says so in its end frame (`truncated`): the loss is not a row.
import { open } from "node:fs/promises";
import type { DocRecord } from "../types.js";
import { u32Array } from "../lib/u32-slab.js";
import type { QuarantineEntry } from "../sources/source.js";
import type { Truncation } from "../sources/row.js";

/** A unit whose input could not be read to its end: the rows read before the loss (of the unit) and what the reader knew. */
export interface UnitTruncation extends Truncation {
  rows_read: number;
}

// `i` is the row's place in its input file (0-based, bad rows counted): the order the ledger follows.
export type UnitEvent =
  | { k: "bad"; i: number; entry: QuarantineEntry }
  | { k: "drop"; i: number; id: string; source: string; file: string; line: number; reason: string; detail?: Record<string, unknown> }
  /** A kept record; its `seq` is the row. */
  | { k: "rec"; r: DocRecord }
  /** Last: rows read from the file, records kept, the stage counters the prefix stages raised on them, and a truncation if any. */
  | { k: "end"; rows: number; records: number; counts: Record<string, number>; truncated?: UnitTruncation };

const REC = 1;
const DROP = 2;
const BAD = 3;
const END = 4;
// Flags of a record frame.
const HAS_SPLIT = 1;
const HAS_CLUSTER = 2;
const TOKENS16 = 4;
const TOKENS32 = 8;
// A conversation's turns (text side) and token layout: absent on every other record, whose bytes do not change.
const HAS_TURNS = 16;
const HAS_CHAT = 32;

function isEmpty(o: object): boolean {
  for (const k in o) if (Object.hasOwn(o, k)) return false;
  return true;
}

const EMPTY = Buffer.alloc(0);

/** Appends frames to a growing buffer; `take` hands the bytes over and starts a new one. */
export class FrameWriter {
  private buf: Buffer = EMPTY;
  private at = 0;

  /** `size`: the first buffer's size, allocated at the first write (and again after each `take`). */
  constructor(private size = 1 << 16) {}

  get length(): number {
    return this.at;
  }

  private room(n: number): void {
    if (this.at + n <= this.buf.length) return;
    const bigger = Buffer.allocUnsafeSlow(Math.max(this.buf.length * 2, this.size, this.at + n));
    this.buf.copy(bigger, 0, 0, this.at);
    this.buf = bigger;
  }

  private u8(v: number): void {
    this.buf[this.at++] = v;
  }

  private u32(v: number): void {
    this.buf.writeUInt32LE(v, this.at);
    this.at += 4;
  }

  private f64(v: number): void {
    this.buf.writeDoubleLE(v, this.at);
    this.at += 8;
  }

  /** A string: room is made for the worst case (3 bytes per UTF-16 unit), the length written after. */
  private str(s: string): void {
    this.room(4 + 3 * s.length);
    const n = s.length === 0 ? 0 : this.buf.write(s, this.at + 4, "utf8");
    this.buf.writeUInt32LE(n, this.at);
    this.at += 4 + n;
  }

  private json(v: unknown): void {
    this.str(v === undefined ? "" : JSON.stringify(v));
  }

  private begin(kind: number): number {
    this.room(64);
    const start = this.at;
    this.at += 4;
    this.u8(kind);
    return start;
  }

  private finish(start: number): void {
    this.buf.writeUInt32LE(this.at - start - 4, start);
  }

  rec(r: DocRecord): void {
    const start = this.begin(REC);
    const t = r.tokens;
    const flagsAt = this.at;
    this.u8((r.split !== undefined ? HAS_SPLIT : 0) | (r.cluster !== undefined ? HAS_CLUSTER : 0) | (t ? TOKENS16 : 0) | (r.turns ? HAS_TURNS : 0) | (r.chat ? HAS_CHAT : 0));
    this.f64(r.seq);
    this.u32(r.origin.line);
    this.str(r.id);
    this.str(r.source);
    this.str(r.origin.file);
    this.str(r.text);
    // Most records carry no meta: an empty string stands for {}.
    this.str(isEmpty(r.meta) ? "" : JSON.stringify(r.meta));
    if (r.split !== undefined) this.str(r.split);
    if (r.cluster !== undefined) this.str(r.cluster);
    if (r.turns) {
      this.room(4);
      this.u32(r.turns.length);
      for (const turn of r.turns) {
        this.str(turn.role);
        this.room(4);
        this.u32(turn.chars);
      }
    }
    if (r.chat) {
      this.room(4 + 4 * r.chat.length);
      this.u32(r.chat.length);
      for (const v of r.chat) this.u32(v);
    }
    if (t) {
      this.room(4 + t.length * 4);
      this.u32(t.length);
      // Two bytes an id while they fit; the first id that does not turns the record to four.
      const b = this.buf;
      let at = this.at;
      for (let j = 0; j < t.length; j++) {
        const v = t[j];
        if (v > 0xffff) {
          b[flagsAt] ^= TOKENS16 | TOKENS32;
          at = this.at;
          b.set(new Uint8Array(t.buffer, t.byteOffset, t.byteLength), at);
          at += t.byteLength;
          break;
        }
        b[at++] = v & 0xff;
        b[at++] = v >>> 8;
      }
      this.at = at;
    }
    this.finish(start);
  }

  drop(r: { id: string; source: string; origin: { file: string; line: number }; seq: number }, reason: string, detail?: Record<string, unknown>): void {
    const start = this.begin(DROP);
    this.f64(r.seq);
    this.u32(r.origin.line);
    this.str(r.id);
    this.str(r.source);
    this.str(r.origin.file);
    this.str(reason);
    this.json(detail);
    this.finish(start);
  }

  bad(i: number, entry: QuarantineEntry): void {
    const start = this.begin(BAD);
    this.f64(i);
    this.json(entry);
    this.finish(start);
  }

  /** The end frame and the trailer that repeats its length. `truncated` is left out when unset, so other units' bytes do not change. */
  end(rows: number, records: number, counts: Record<string, number>, truncated?: UnitTruncation): void {
    const start = this.begin(END);
    this.json(truncated ? { rows, records, counts, truncated } : { rows, records, counts });
    this.finish(start);
    this.room(4);
    this.u32(this.at - start - 4);
  }

  /** Any event, as read back. */
  event(e: UnitEvent): void {
    if (e.k === "rec") this.rec(e.r);
    else if (e.k === "drop") this.drop({ id: e.id, source: e.source, origin: { file: e.file, line: e.line }, seq: e.i }, e.reason, e.detail);
    else if (e.k === "bad") this.bad(e.i, e.entry);
    else this.end(e.rows, e.records, e.counts, e.truncated);
  }

  /** The frames written so far, in memory of their own (never Node's shared pool, so they can be moved to a thread); the writer starts afresh. */
  take(): Buffer {
    const out = this.buf.subarray(0, this.at);
    // The next buffer is made when it is written to: a writer often ends with its take.
    this.size = Math.max(this.size, this.buf.length);
    this.buf = EMPTY;
    this.at = 0;
    return out;
  }
}

/** Reads the frames of one buffer. */
class FrameReader {
  at: number;
  constructor(
    private readonly b: Buffer,
    start: number,
  ) {
    this.at = start;
  }
  u8(): number {
    return this.b[this.at++];
  }
  u32(): number {
    const v = this.b.readUInt32LE(this.at);
    this.at += 4;
    return v;
  }
  f64(): number {
    const v = this.b.readDoubleLE(this.at);
    this.at += 8;
    return v;
  }
  str(): string {
    const n = this.u32();
    const s = n === 0 ? "" : this.b.toString("utf8", this.at, this.at + n);
    this.at += n;
    return s;
  }
  /** A string's UTF-8 bytes, copied out (the read buffer is reused). */
  bytes(): Uint8Array {
    const n = this.u32();
    const out = Buffer.from(this.b.subarray(this.at, this.at + n));
    this.at += n;
    return out;
  }
  /** Passes over a string, giving its length in bytes. */
  skip(): number {
    const n = this.u32();
    this.at += n;
    return n;
  }
  json<T>(): T | undefined {
    const s = this.str();
    return s === "" ? undefined : (JSON.parse(s) as T);
  }
  tokens(wide: boolean): Uint32Array {
    const n = this.u32();
    // Copied out (the read buffer is reused), widened by the typed-array copy from an aligned view.
    const out = u32Array(n);
    const size = n * (wide ? 4 : 2);
    let bytes: Uint8Array = this.b.subarray(this.at, this.at + size);
    if (bytes.byteOffset % (wide ? 4 : 2) !== 0) bytes = Uint8Array.prototype.slice.call(bytes);
    out.set(wide ? new Uint32Array(bytes.buffer, bytes.byteOffset, n) : new Uint16Array(bytes.buffer, bytes.byteOffset, n));
    const at = this.at + size;
    this.at = at;
    return out;
  }
}

/** What a reader asks of the frames: records' text (else "" with its length in `textBytes`), and records at all (else they are skipped). */
export interface ReadOptions {
  /** false: "" with `textBytes`; "utf8": "" with `textBytes` and the bytes in `utf8` (a copy). */
  text?: boolean | "utf8";
  records?: boolean;
  /** Records of rows (`seq`) below this are passed over without being decoded. */
  fromSeq?: number;
  /** Records with their row, line, id, source and file only: no text, meta, split, cluster or token ids (an id check's read). */
  bare?: boolean;
}

function decodeBody(b: Buffer, start: number, o?: ReadOptions): UnitEvent {
  const f = new FrameReader(b, start);
  const kind = f.u8();
  if (kind === REC) {
    const flags = f.u8();
    const seq = f.f64();
    const line = f.u32();
    const id = f.str();
    const source = f.str();
    const file = f.str();
    if (o?.bare) {
      const textBytes = f.skip();
      return { k: "rec", r: { id, source, text: "", textBytes, meta: {}, origin: { file, line }, seq } };
    }
    const mode = o?.text ?? true;
    const utf8 = mode === "utf8" ? f.bytes() : undefined;
    const textBytes = mode === false ? f.skip() : utf8 ? utf8.length : 0;
    const text = mode === true ? f.str() : "";
    const meta = f.json<Record<string, unknown>>() ?? {};
    const r: DocRecord = { id, source, text, meta, origin: { file, line }, seq };
    if (mode !== true) r.textBytes = textBytes;
    if (utf8) r.utf8 = utf8;
    if (flags & HAS_SPLIT) r.split = f.str();
    if (flags & HAS_CLUSTER) r.cluster = f.str();
    if (flags & HAS_TURNS) {
      const n = f.u32();
      const turns = new Array(n);
      for (let k = 0; k < n; k++) turns[k] = { role: f.str(), chars: f.u32() };
      r.turns = turns;
    }
    if (flags & HAS_CHAT) {
      const n = f.u32();
      const chat = new Uint32Array(n);
      for (let k = 0; k < n; k++) chat[k] = f.u32();
      r.chat = chat;
    }
    if (flags & (TOKENS16 | TOKENS32)) r.tokens = f.tokens((flags & TOKENS32) !== 0);
    return { k: "rec", r };
  }
  if (kind === DROP) {
    const i = f.f64();
    const line = f.u32();
    const id = f.str();
    const source = f.str();
    const file = f.str();
    const reason = f.str();
    const detail = f.json<Record<string, unknown>>();
    return { k: "drop", i, id, source, file, line, reason, ...(detail ? { detail } : {}) };
  }
  if (kind === BAD) {
    const i = f.f64();
    return { k: "bad", i, entry: f.json<QuarantineEntry>()! };
  }
  if (kind === END) return { k: "end", ...f.json<{ rows: number; records: number; counts: Record<string, number>; truncated?: UnitTruncation }>()! };
  throw new Error(`unknown frame kind ${kind}`);
}

/** The record a drop frame names (its text and meta are not kept). */
export function dropRecord(e: Extract<UnitEvent, { k: "drop" }>): DocRecord {
  return { id: e.id, source: e.source, text: "", meta: {}, origin: { file: e.file, line: e.line }, seq: e.i };
}

/** The events of frames held in memory (a batch), in order; stops after an end frame. */
export function* decodeFrames(bytes: Uint8Array): Generator<UnitEvent> {
  const b = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  for (let at = 0; at + 4 <= b.length; ) {
    const n = b.readUInt32LE(at);
    const e = decodeBody(b, at + 4);
    yield e;
    if (e.k === "end") return;
    at += 4 + n;
  }
}

/** The events of a unit file, read in large chunks; stops after the end frame. */
export async function* readEvents(path: string, o?: ReadOptions): AsyncGenerator<UnitEvent> {
  const records = o?.records !== false;
  const fromSeq = o?.fromSeq;
  const fh = await open(path, "r");
  try {
    let buf = Buffer.allocUnsafe(1 << 22);
    let filled = 0;
    for (;;) {
      const { bytesRead } = await fh.read(buf, filled, buf.length - filled, null);
      const end = filled + bytesRead;
      let at = 0;
      while (at + 4 <= end) {
        const n = buf.readUInt32LE(at);
        if (at + 4 + n > end) break;
        const rec = buf[at + 4] === REC;
        // A record frame's row number follows its kind and flags bytes.
        if (rec && (!records || (fromSeq !== undefined && buf.readDoubleLE(at + 6) < fromSeq))) {
          at += 4 + n;
          continue;
        }
        const e = decodeBody(buf, at + 4, o);
        yield e;
        if (e.k === "end") return;
        at += 4 + n;
      }
      if (bytesRead === 0) {
        if (end > at) throw new Error(`${path}: ends inside a frame`);
        return;
      }
      // Keep the unfinished frame at the front for the next read, in a larger buffer if it needs one.
      filled = end - at;
      const need = filled >= 4 ? 4 + buf.readUInt32LE(at) : 0;
      if (need > buf.length) {
        const bigger = Buffer.allocUnsafe(Math.max(need, buf.length * 2));
        buf.copy(bigger, 0, at, end);
        buf = bigger;
      } else if (at > 0) buf.copy(buf, 0, at, end);
    }
  } finally {
    await fh.close();
  }
}

/** The end frame of a complete unit file, read from its last bytes. */
export async function readEnd(path: string): Promise<Extract<UnitEvent, { k: "end" }> | undefined> {
  const fh = await open(path, "r");
  try {
    const { size } = await fh.stat();
    if (size < 9) return undefined;
    const tail = Buffer.alloc(4);
    await fh.read(tail, 0, 4, size - 4);
    const n = tail.readUInt32LE(0);
    if (n + 8 > size) return undefined;
    const body = Buffer.alloc(n + 4);
    await fh.read(body, 0, n + 4, size - 8 - n);
    if (body.readUInt32LE(0) !== n) return undefined;
    const e = decodeBody(body, 4);
    return e.k === "end" ? e : undefined;
  } finally {
    await fh.close();
  }
}
