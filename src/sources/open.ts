// Opens an input file as a lazy stream of byte chunks, decompressing `.gz` and `.zst`; read failures become InputReadError.

import { open } from "node:fs/promises";
import { pipeline, Transform, type Readable } from "node:stream";
import { createGunzip } from "node:zlib";
import { Decompress } from "fzstd";
import { SiftpackError, describeSystemError } from "../errors.js";

/** Compressed formats recognised by extension but not readable (node:zlib in Node 20 has no xz or bzip2). */
const UNSUPPORTED: Record<string, string> = {
  ".xz": "xz",
  ".bz2": "bzip2",
};

/** A failure while reading an opened file (disk error, corrupt compressed data). Its message is user-facing. */
export class InputReadError extends Error {
  constructor(message: string, options?: { cause?: unknown }) {
    super(message, options);
    this.name = "InputReadError";
  }
}

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
  const raw = handle.createReadStream({ highWaterMark: 1 << 20, ...(range ? { start: range.start, end: range.end - 1 } : {}) });
  if (compression === "none") return raw;
  // pipeline() tears down both ends if either fails or the consumer stops early, so the fd never leaks.
  return pipeline(raw, compression === "gzip" ? createGunzip() : createZstdDecoder(), () => {});
}

/** A zstd-decoding error; its message is shown to users as "corrupt zstd data: …". */
class ZstdDataError extends Error {
  readonly code = "ZSTD_DATA";
}

/**
 * Streaming zstd decompression. Node 20's zlib has no zstd, so this uses fzstd, a pure-JS
 * decoder (no native build): every frame of the file is decoded in turn, as chunks arrive.
 */
export function createZstdDecoder(): Transform {
  let decoder: Decompress;
  const transform = new Transform({
    transform(chunk: Buffer, _enc, done) {
      try {
        decoder.push(chunk);
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
  decoder = new Decompress((data) => {
    if (data.length > 0) transform.push(Buffer.from(data.buffer, data.byteOffset, data.length));
  });
  return transform;
}

/** What a failed read means to a user. zlib errors carry Z_* codes; everything else is an OS error. */
export function describeReadError(err: unknown): string {
  const code = (err as NodeJS.ErrnoException)?.code;
  if (typeof code === "string" && code.startsWith("Z_")) return `corrupt gzip data: ${(err as Error).message}`;
  if (err instanceof ZstdDataError) return `corrupt zstd data: ${err.message}`;
  return `read error: ${describeSystemError(err)}`;
}

/** Iterates the chunks of an opened input, turning stream errors into InputReadError; closes the input when done or abandoned. */
export async function* readChunks(input: Readable): AsyncGenerator<Buffer> {
  try {
    for await (const chunk of input) yield chunk as Buffer;
  } catch (err) {
    throw new InputReadError(describeReadError(err), { cause: err });
  } finally {
    input.destroy();
  }
}
