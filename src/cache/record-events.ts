// What a cached read unit holds: the fates of one input file's rows after the leading per-record
// stages, in the order they happened, so replaying them gives the same ledger and records.
import { createReadStream, createWriteStream, type WriteStream } from "node:fs";
import { once } from "node:events";
import { createGunzip, createGzip, type Gzip } from "node:zlib";
import { createInterface } from "node:readline";
import type { DocRecord } from "../types.js";
import type { QuarantineEntry } from "../sources/source.js";

export type UnitEvent =
  | { k: "bad"; entry: QuarantineEntry }
  | { k: "drop"; id: string; source: string; file: string; line: number; reason: string; detail?: Record<string, unknown> }
  | { k: "rec"; id: string; source: string; file: string; line: number; text: string; meta: Record<string, unknown>; tokens?: string }
  /** Last: rows read from the file, and the stage counters the prefix stages raised on them. */
  | { k: "end"; rows: number; counts: Record<string, number> };

export function tokensToText(t: Uint32Array): string {
  return Buffer.from(t.buffer, t.byteOffset, t.byteLength).toString("base64");
}

export function tokensFromText(s: string): Uint32Array {
  const b = Buffer.from(s, "base64");
  const out = new Uint32Array(b.length / 4);
  new Uint8Array(out.buffer).set(b);
  return out;
}

export function recordEvent(r: DocRecord): UnitEvent {
  return { k: "rec", id: r.id, source: r.source, file: r.origin.file, line: r.origin.line, text: r.text, meta: r.meta, ...(r.tokens ? { tokens: tokensToText(r.tokens) } : {}) };
}

/** Writes events as gzipped JSON lines, awaiting the stream when its buffer is full. */
export class EventWriter {
  private readonly gz: Gzip;
  private readonly out: WriteStream;
  private failed: Error | undefined;

  constructor(path: string) {
    this.out = createWriteStream(path);
    this.gz = createGzip({ level: 1 });
    this.gz.pipe(this.out);
    this.out.on("error", (e) => (this.failed ??= e));
    this.gz.on("error", (e) => (this.failed ??= e));
  }

  /** Queues an event; call `drain` now and then (the buffer is not awaited here, so stages can call it synchronously). */
  add(e: UnitEvent): void {
    this.gz.write(JSON.stringify(e) + "\n");
  }

  async drain(): Promise<void> {
    if (this.failed) throw this.failed;
    if (this.gz.writableNeedDrain) await once(this.gz, "drain");
  }

  async close(): Promise<void> {
    this.gz.end();
    await once(this.out, "close");
    if (this.failed) throw this.failed;
  }

  /** Abandons the file (a failed unit); the caller removes it. */
  destroy(): void {
    this.gz.destroy();
    this.out.destroy();
  }
}

export async function* readEvents(path: string): AsyncGenerator<UnitEvent> {
  const lines = createInterface({ input: createReadStream(path).pipe(createGunzip()), crlfDelay: Infinity });
  for await (const line of lines) if (line) yield JSON.parse(line) as UnitEvent;
}
