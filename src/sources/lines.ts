// Splits a byte stream into physical lines on "\n" (a trailing "\r" is dropped), holding at most one line.

/** The bytes of a source's `max_line_mb` (MiB); undefined when unset, so the reader's default (64 MiB) applies. */
export function lineLimitBytes(mb: number | undefined): number | undefined {
  return mb === undefined ? undefined : Math.floor(mb * 1024 * 1024);
}

export type Line =
  | { number: number; bytes: Buffer; tooLong?: undefined }
  | { number: number; bytes?: undefined; tooLong: true };

export class LineSplitter {
  private parts: Buffer[] = [];
  private size = 0;
  private tooLong = false;
  private next = 1;

  /** Lines longer than `maxBytes` are reported as tooLong and their bytes dropped as they arrive. */
  constructor(private readonly maxBytes: number) {}

  /** 1-based number of the line being assembled: where a read error interrupted the file. */
  get current(): number {
    return this.next;
  }

  push(chunk: Buffer): Line[] {
    const lines: Line[] = [];
    let start = 0;
    for (let nl = chunk.indexOf(0x0a); nl !== -1; nl = chunk.indexOf(0x0a, start)) {
      this.add(chunk.subarray(start, nl));
      lines.push(this.finish());
      start = nl + 1;
    }
    // Copied because the unfinished line outlives this chunk.
    if (start < chunk.length) this.add(Buffer.from(chunk.subarray(start)));
    return lines;
  }

  /** The final line when the input does not end with a newline. */
  end(): Line[] {
    return this.size > 0 || this.tooLong ? [this.finish()] : [];
  }

  private add(part: Buffer): void {
    if (this.tooLong) return;
    this.size += part.length;
    if (this.size > this.maxBytes) {
      this.tooLong = true;
      this.parts = [];
    } else if (part.length > 0) this.parts.push(part);
  }

  private finish(): Line {
    const number = this.next++;
    const parts = this.parts;
    const tooLong = this.tooLong;
    this.parts = [];
    this.size = 0;
    this.tooLong = false;
    if (tooLong) return { number, tooLong: true };
    let bytes = parts.length === 1 ? parts[0] : Buffer.concat(parts);
    if (bytes.length > 0 && bytes[bytes.length - 1] === 0x0d) bytes = bytes.subarray(0, -1);
    return { number, bytes };
  }
}
