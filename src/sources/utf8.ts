// Strict UTF-8: decode without silent U+FFFD replacement, find invalid bytes, strip a leading BOM.

import { isUtf8 } from "node:buffer";

// ignoreBOM: true keeps a U+FEFF inside the data; the file-level BOM is removed by withoutBom() instead.
const strictDecoder = new TextDecoder("utf-8", { fatal: true, ignoreBOM: true });

/** The text, or undefined if `bytes` is not valid UTF-8. */
export function decodeStrict(bytes: Uint8Array): string | undefined {
  try {
    return strictDecoder.decode(bytes);
  } catch {
    return undefined;
  }
}

/**
 * Length of the UTF-8 sequence starting at `i`: n > 0 if valid, 0 if invalid, -1 if it is a
 * valid beginning cut off by `end`. Ranges follow the Unicode well-formed byte sequence table
 * (no overlong forms, no surrogates, nothing above U+10FFFF).
 */
function sequenceLength(b: Uint8Array, i: number, end: number): number {
  const c = b[i];
  if (c < 0x80) return 1;
  let trailing: number;
  let lo = 0x80;
  let hi = 0xbf;
  if (c >= 0xc2 && c <= 0xdf) trailing = 1;
  else if (c >= 0xe0 && c <= 0xef) {
    trailing = 2;
    if (c === 0xe0) lo = 0xa0;
    else if (c === 0xed) hi = 0x9f;
  } else if (c >= 0xf0 && c <= 0xf4) {
    trailing = 3;
    if (c === 0xf0) lo = 0x90;
    else if (c === 0xf4) hi = 0x8f;
  } else return 0;
  for (let k = 1; k <= trailing; k++) {
    if (i + k >= end) return -1;
    const d = b[i + k];
    if (k === 1 ? d < lo || d > hi : d < 0x80 || d > 0xbf) return 0;
  }
  return trailing + 1;
}

/** Offset of the first byte that is not part of valid UTF-8 (a truncated final sequence counts), or -1. */
export function firstInvalidUtf8(bytes: Uint8Array): number {
  let i = 0;
  while (i < bytes.length) {
    const n = sequenceLength(bytes, i, bytes.length);
    if (n <= 0) return i;
    i += n;
  }
  return -1;
}

/** Where a multi-byte sequence cut off by the end of `b` begins (b.length if none). */
function incompleteTail(b: Uint8Array): number {
  for (let j = b.length - 1; j >= Math.max(0, b.length - 3); j--) {
    const c = b[j];
    if (c < 0x80) return b.length;
    if (c >= 0xc0) return sequenceLength(b, j, b.length) === -1 ? j : b.length;
  }
  return b.length;
}

/** Decoded text, or the absolute byte offset of one invalid byte (which produced no text). */
export type Utf8Piece = string | { invalidAt: number };

/**
 * Incremental decoder that reports each invalid byte instead of replacing it, so a caller can
 * pin the damage to the record it belongs to. Valid chunks take the native isUtf8 fast path.
 */
export class Utf8Pieces {
  private carry: Buffer = Buffer.alloc(0);
  private offset = 0; // file offset of carry[0]

  push(chunk: Uint8Array): Utf8Piece[] {
    const b = this.carry.length > 0 ? Buffer.concat([this.carry, chunk]) : Buffer.from(chunk.buffer, chunk.byteOffset, chunk.byteLength);
    const tail = incompleteTail(b);
    if (isUtf8(b.subarray(0, tail))) return this.emit(b, [b.toString("utf8", 0, tail)], tail);
    const pieces: Utf8Piece[] = [];
    let start = 0;
    let i = 0;
    while (i < b.length) {
      const n = sequenceLength(b, i, b.length);
      if (n > 0) i += n;
      else if (n === -1) break;
      else {
        if (i > start) pieces.push(b.toString("utf8", start, i));
        pieces.push({ invalidAt: this.offset + i });
        start = ++i;
      }
    }
    if (i > start) pieces.push(b.toString("utf8", start, i));
    return this.emit(b, pieces, i);
  }

  /** Flushes a sequence left incomplete by the end of the input: every byte of it is invalid. */
  end(): Utf8Piece[] {
    const pieces: Utf8Piece[] = [];
    for (let k = 0; k < this.carry.length; k++) pieces.push({ invalidAt: this.offset + k });
    this.offset += this.carry.length;
    this.carry = Buffer.alloc(0);
    return pieces;
  }

  private emit(b: Buffer, pieces: Utf8Piece[], consumed: number): Utf8Piece[] {
    this.carry = Buffer.from(b.subarray(consumed));
    this.offset += consumed;
    return pieces.filter((p) => p !== "");
  }
}

const BOM = Buffer.from([0xef, 0xbb, 0xbf]);

function isBomPrefix(b: Buffer): boolean {
  return b.length < BOM.length && BOM.subarray(0, b.length).equals(b);
}

/** Passes chunks through, dropping a UTF-8 byte-order mark at the very start even if it spans chunks. */
export async function* withoutBom(chunks: AsyncIterable<Buffer>): AsyncGenerator<Buffer> {
  let pending: Buffer | undefined = Buffer.alloc(0); // held while it could still be the start of a BOM
  for await (const chunk of chunks) {
    if (pending === undefined) {
      yield chunk;
      continue;
    }
    pending = Buffer.concat([pending, chunk]);
    if (isBomPrefix(pending)) continue;
    const rest: Buffer = pending.subarray(0, 3).equals(BOM) ? pending.subarray(3) : pending;
    pending = undefined;
    if (rest.length > 0) yield rest;
  }
  // A file shorter than a BOM that merely starts like one keeps its bytes (they are invalid UTF-8 anyway).
  if (pending !== undefined && pending.length > 0) yield pending;
}
