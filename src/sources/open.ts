// Opens an input file as a lazy stream of byte chunks, decompressing `.gz` and `.zst`; read failures
// become InputReadError, which knows how far into the file reading got.

import { open } from "node:fs/promises";
import { pipeline, Transform, type Readable } from "node:stream";
import { createGunzip } from "node:zlib";
import { Decompress } from "fzstd";
import { SiftpackError, describeSystemError } from "../errors.js";
import type { Truncation } from "./row.js";

/** Compressed formats recognised by extension but not readable (node:zlib in Node 20 has no xz or bzip2). */
const UNSUPPORTED: Record<string, string> = {
  ".xz": "xz",
  ".bz2": "bzip2",
};

/**
 * A failure while reading an opened file (disk error, corrupt or cut compressed data). Its message
 * is user-facing; `bytesRead` (of the file's bytes, compressed ones for .gz/.zst) and `size` say how
 * far reading got, when known.
 */
export class InputReadError extends Error {
  bytesRead?: number;
  size?: number;
  constructor(message: string, options?: { cause?: unknown; bytesRead?: number; size?: number }) {
    super(message, options);
    this.name = "InputReadError";
    if (options?.bytesRead !== undefined) this.bytesRead = options.bytesRead;
    if (options?.size !== undefined) this.size = options.size;
  }
}

/** How far into its file an opened input has got: the file's size and the bytes consumed so far. */
interface Progress {
  size: number;
  consumed(): number;
}

/** The progress of the streams openInput returned, looked up when a read fails. */
const PROGRESS = new WeakMap<Readable, Progress>();

export type Compression = "none" | "gzip" | "zstd";

/** Compression implied by the file name; throws SP_INPUT_FORMAT for compressions that cannot be read. */
export function compressionOf(file: string): Compression {
  const lower = file.toLowerCase();
  if (lower.endsWith(".gz")) return "gzip";
  if (lower.endsWith(".zst")) return "zstd";
  for (const [ext, name] of Object.entries(UNSUPPORTED)) {
    if (lower.endsWith(ext)) {
      throw new SiftpackError(
        "SP_INPUT_FORMAT",
        `${file}: ${name}-compressed input (${ext}) is not supported yet; decompress it first or recompress it with gzip or zstd`,
      );
    }
  }
  return "none";
}

/**
 * Opens `file` for streaming. The file is opened here (not lazily) so a missing or unreadable
 * file is a SiftpackError at once rather than a read error halfway through a source.
 * Destroying the returned stream closes the file descriptor.
 */
export async function openInput(file: string, range?: { start: number; end: number }): Promise<Readable> {
  const compression = compressionOf(file);
  let handle;
  try {
    handle = await open(file, "r");
  } catch (err) {
    throw new SiftpackError("SP_INPUT_MISSING", `cannot open "${file}": ${describeSystemError(err)}`, { cause: err });
  }
  if (range && compression !== "none") throw new Error(`openInput: a byte range of a compressed file (${file})`);
  const size = (await handle.stat().catch(() => undefined))?.size;
  const raw = handle.createReadStream({ highWaterMark: 1 << 20, ...(range ? { start: range.start, end: range.end - 1 } : {}) });
  const offset = range?.start ?? 0;
  if (compression === "none") {
    if (size !== undefined) PROGRESS.set(raw, { size, consumed: () => offset + raw.bytesRead });
    return raw;
  }
  // What the decompressor consumed, not what was read from disk (up to a MiB ahead of it): zlib
  // streams count their consumed input in `bytesWritten` (Node's zlib documentation, from memory);
  // the zstd decoder counts the input it decoded without error.
  const decoder = compression === "gzip" ? createGunzip() : createZstdDecoder();
  // pipeline() tears down both ends if either fails or the consumer stops early, so the fd never leaks.
  const out = pipeline(raw, decoder, () => {});
  if (size !== undefined) PROGRESS.set(out, { size, consumed: () => (decoder as Transform & { bytesWritten: number }).bytesWritten });
  return out;
}

/** A zstd-decoding error; its message is shown to users as "corrupt zstd data: …". */
class ZstdDataError extends Error {
  readonly code = "ZSTD_DATA";
}

/** Input handed to the zstd decoder at a time, so the bytes consumed before a failure are known to within this. */
const ZSTD_STEP = 1 << 16;

/**
 * Streaming zstd decompression. Node 20's zlib has no zstd, so this uses fzstd, a pure-JS
 * decoder (no native build): every frame of the file is decoded in turn, as chunks arrive.
 * `bytesWritten` counts the compressed bytes decoded without error, as zlib's streams do.
 */
export function createZstdDecoder(): Transform & { bytesWritten: number } {
  let decoder: Decompress;
  const transform = new Transform({
    transform(chunk: Buffer, _enc, done) {
      try {
        for (let at = 0; at < chunk.length; at += ZSTD_STEP) {
          const step = chunk.subarray(at, at + ZSTD_STEP);
          decoder.push(step);
          out.bytesWritten += step.length;
        }
        done();
      } catch (err) {
        done(new ZstdDataError((err as Error).message, { cause: err }));
      }
    },
    flush(done) {
      try {
        // An empty final push checks that the last frame is complete ("unexpected EOF" otherwise).
        decoder.push(new Uint8Array(0), true);
        done();
      } catch (err) {
        done(new ZstdDataError((err as Error).message, { cause: err }));
      }
    },
  });
  const out = Object.assign(transform, { bytesWritten: 0 });
  decoder = new Decompress((data) => {
    if (data.length > 0) transform.push(Buffer.from(data.buffer, data.byteOffset, data.length));
  });
  return out;
}

/** What a failed read means to a user. zlib errors carry Z_* codes; everything else is an OS error. */
export function describeReadError(err: unknown): string {
  const code = (err as NodeJS.ErrnoException)?.code;
  if (typeof code === "string" && code.startsWith("Z_")) return `corrupt gzip data: ${(err as Error).message}`;
  if (err instanceof ZstdDataError) return `corrupt zstd data: ${err.message}`;
  return `read error: ${describeSystemError(err)}`;
}

/**
 * Iterates the chunks of an opened input, turning stream errors into InputReadError (with how far
 * into the file reading got, for inputs from openInput); closes the input when done or abandoned.
 */
export async function* readChunks(input: Readable): AsyncGenerator<Buffer> {
  try {
    for await (const chunk of input) yield chunk as Buffer;
  } catch (err) {
    const progress = PROGRESS.get(input);
    throw new InputReadError(describeReadError(err), { cause: err, ...(progress ? { bytesRead: Math.min(progress.consumed(), progress.size), size: progress.size } : {}) });
  } finally {
    input.destroy();
  }
}

/** The truncation an InputReadError means: its message and how far reading got. */
export function truncationOf(err: InputReadError): Truncation {
  return { error: err.message, ...(err.bytesRead !== undefined ? { bytes_read: err.bytesRead } : {}), ...(err.size !== undefined ? { size: err.size } : {}) };
}
