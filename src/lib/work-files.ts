// Files that appear under their final name only when complete, with a temporary name of their own
// per writer: the build engine's work files and a keyed stage's files are written this way.
import { createWriteStream, type WriteStream } from "node:fs";
import { copyFile, link, mkdir, rename, rm, writeFile } from "node:fs/promises";
import { once } from "node:events";
import { finished } from "node:stream/promises";
import { randomBytes } from "node:crypto";
import { dirname } from "node:path";

// Not output/atomic.ts's fixed `.tmp` name: a scheduler may run the same task twice at once (a
// retry while the first attempt still runs), and each attempt needs a temporary of its own.
const tmpName = (path: string) => `${path}.tmp-${randomBytes(4).toString("hex")}`;

/** Writes a whole file under a temporary name and renames it into place. */
export async function writeAtomic(path: string, data: string | Uint8Array): Promise<void> {
  await mkdir(dirname(path), { recursive: true });
  const tmp = tmpName(path);
  await writeFile(tmp, data);
  await rename(tmp, path);
}

/**
 * A second name for a complete file that is never written again (a unit file and its cache entry):
 * a hard link, or a copy where links cannot be made (another file system, a file system without them).
 */
export async function linkOrCopy(from: string, to: string): Promise<void> {
  try {
    await link(from, to);
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    if (code !== "EXDEV" && code !== "EPERM" && code !== "ENOTSUP" && code !== "EMLINK" && code !== "EOPNOTSUPP") throw err;
    await copyFile(from, to);
  }
}

/** A second name (`linkOrCopy`) put into place under a temporary name first. */
export async function linkAtomic(from: string, to: string): Promise<void> {
  await mkdir(dirname(to), { recursive: true });
  const tmp = tmpName(to);
  await linkOrCopy(from, tmp);
  await rename(tmp, to);
}

/** A file written as a stream, renamed into place by `commit`; `abort` removes the temporary. */
export class AtomicStream {
  readonly out: WriteStream;
  private readonly tmp: string;
  private failure: Error | undefined;

  private constructor(private readonly path: string) {
    this.tmp = tmpName(path);
    // A deep buffer: the writer goes on computing while the disk takes earlier bytes, and waits only past 8 MB.
    this.out = createWriteStream(this.tmp, { highWaterMark: 1 << 23 });
    this.out.on("error", (e) => (this.failure ??= e));
  }

  static async open(path: string): Promise<AtomicStream> {
    await mkdir(dirname(path), { recursive: true });
    return new AtomicStream(path);
  }

  /** Queues data; awaits only when the buffer is full. */
  async write(data: string | Uint8Array): Promise<void> {
    if (this.failure) throw this.failure;
    if (!this.out.write(data)) await once(this.out, "drain");
  }

  async commit(): Promise<void> {
    this.out.end();
    // finished() also settles for a stream that already failed and closed (a full disk mid-write),
    // where waiting for "close" would wait forever.
    await finished(this.out).catch((e) => (this.failure ??= e));
    if (this.failure) throw this.failure;
    await rename(this.tmp, this.path);
  }

  async abort(): Promise<void> {
    this.out.destroy();
    await rm(this.tmp, { force: true });
  }
}

