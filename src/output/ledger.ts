// The ledger: one gzipped JSON line per input record with its fate, and one per input file that could not
// be read to its end (fate "truncated", not a record); the manifest's counts are its sums.
import { createWriteStream, type WriteStream } from "node:fs";
import { rename } from "node:fs/promises";
import { once } from "node:events";
import { finished } from "node:stream/promises";
import { createGzip, type Gzip } from "node:zlib";
import type { DocRecord } from "../types.js";
import type { QuarantineEntry } from "../sources/source.js";
import type { Truncation } from "../sources/row.js";

export interface FateCounts {
  read: number;
  kept: number;
  dropped: number;
  quarantined: number;
}

export interface SourceCounts extends FateCounts {
  /** Tokens this source put into the splits (repeats by weight included). */
  tokens: number;
}

export interface LedgerCounts extends FateCounts {
  /** Drop reasons and "quarantined" → count. */
  by_reason: Record<string, number>;
  by_source: Record<string, SourceCounts>;
  by_split: Record<string, number>;
  /**
   * Input files that could not be read to their end (accepted with accept_truncated) and the rows
   * their formats said were lost. Not records: read = kept + dropped + quarantined still holds.
   * Present only when a file was truncated, so other builds' manifests keep their bytes.
   */
  truncated_files?: number;
  rows_lost?: number;
}

/** A file that could not be read to its end, as its ledger line tells it. */
export interface TruncatedFile extends Truncation {
  source: string;
  file: string;
  /** Rows of the file read before the loss (bad ones included). */
  rows_read: number;
}

const zero = (): SourceCounts => ({ read: 0, kept: 0, dropped: 0, quarantined: 0, tokens: 0 });

/**
 * Streams JSON lines into a file through gzip (fixed level, mtime 0, so equal content gives equal
 * bytes). Lines are gathered into chunks of CHUNK characters before they reach the stream: a write
 * per line would cost a trip to zlib's thread per line. Deflate's output does not depend on how its
 * input is cut into writes (no flush is asked between them), so the bytes are the same.
 */
class JsonLinesFile {
  private readonly out: WriteStream;
  private readonly head: Gzip | WriteStream;
  private readonly path: string;
  private failure: Error | undefined;
  private pending = "";

  constructor(path: string, gzip: boolean) {
    this.path = path;
    this.out = createWriteStream(`${path}.tmp`);
    this.out.on("error", (e) => (this.failure ??= e));
    if (gzip) {
      const gz = createGzip({ level: 6 });
      gz.on("error", (e) => (this.failure ??= e));
      gz.pipe(this.out);
      this.head = gz;
    } else this.head = this.out;
  }

  /** Resolves at once unless a chunk is handed on and the stream buffer is full, so callers can await every line cheaply. */
  async write(obj: object): Promise<void> {
    if (this.failure) throw this.failure;
    this.pending += JSON.stringify(obj) + "\n";
    if (this.pending.length >= CHUNK) await this.handOn();
  }

  private async handOn(): Promise<void> {
    const chunk = this.pending;
    this.pending = "";
    if (chunk.length > 0 && !this.head.write(chunk)) await once(this.head, "drain");
  }

  async close(): Promise<void> {
    await this.handOn();
    this.head.end();
    // finished() settles for a stream that already failed and closed too (waiting for "close" would
    // not); a failed gzip stream leaves the file stream open, so that one is closed here.
    await finished(this.head).catch((e) => (this.failure ??= e));
    if (this.failure) this.out.destroy();
    await finished(this.out).catch((e) => (this.failure ??= e));
    if (this.failure) throw this.failure;
    await rename(`${this.path}.tmp`, this.path);
  }
}

const CHUNK = 1 << 18;

export class Ledger {
  readonly counts: LedgerCounts = { ...zero(), by_reason: {}, by_source: {}, by_split: {} };
  private readonly ledger: JsonLinesFile;
  private readonly quarantine: JsonLinesFile;
  private readonly queue: object[] = [];

  constructor(ledgerPath: string, quarantinePath: string) {
    this.ledger = new JsonLinesFile(ledgerPath, true);
    this.quarantine = new JsonLinesFile(quarantinePath, false);
  }

  private source(name: string): SourceCounts {
    return (this.counts.by_source[name] ??= zero());
  }

  private tally(source: string, fate: "kept" | "dropped" | "quarantined", reason?: string): void {
    const s = this.source(source);
    s.read++;
    s[fate]++;
    this.counts.read++;
    this.counts[fate]++;
    if (reason) this.counts.by_reason[reason] = (this.counts.by_reason[reason] ?? 0) + 1;
  }

  /** Stages call this synchronously; lines are queued and written by `flush`. */
  dropped(r: DocRecord, reason: string, detail?: Record<string, unknown>): void {
    this.tally(r.source, "dropped", reason);
    this.queue.push({ source: r.source, id: r.id, file: r.origin.file, line: r.origin.line, fate: "dropped", reason, ...(detail ? { detail } : {}) });
  }

  /** `copies`: whole copies in train when not 1; `part_tokens`: one more copy of the record's first that many tokens (a mixture's). */
  kept(r: DocRecord, extra: { copies?: number; part_tokens?: number } = {}): void {
    this.tally(r.source, "kept");
    this.source(r.source).tokens += (r.tokens?.length ?? 0) * (extra.copies ?? 1) + (extra.part_tokens ?? 0);
    const split = r.split ?? "train";
    this.counts.by_split[split] = (this.counts.by_split[split] ?? 0) + 1;
    this.queue.push({ source: r.source, id: r.id, file: r.origin.file, line: r.origin.line, fate: "kept", split, tokens: r.tokens?.length ?? 0, ...extra });
  }

  async quarantined(e: QuarantineEntry): Promise<void> {
    this.tally(e.source, "quarantined", "quarantined");
    this.queue.push({ source: e.source, file: e.file, line: e.line, fate: "quarantined", error: e.error });
    await this.quarantine.write(e);
  }

  /** A file that could not be read to its end: a line after its last row, counted apart from the records. */
  truncated(t: TruncatedFile): void {
    this.counts.truncated_files = (this.counts.truncated_files ?? 0) + 1;
    this.counts.rows_lost = (this.counts.rows_lost ?? 0) + (t.rows_lost ?? 0);
    const line: Record<string, unknown> = { source: t.source, file: t.file, fate: "truncated", rows_read: t.rows_read };
    for (const k of ["bytes_read", "size", "rows_lost"] as const) if (t[k] !== undefined) line[k] = t[k];
    line.error = t.error;
    this.queue.push(line);
  }

  async flush(): Promise<void> {
    for (const line of this.queue) await this.ledger.write(line);
    this.queue.length = 0;
  }

  async close(): Promise<void> {
    await this.flush();
    await this.ledger.close();
    await this.quarantine.close();
  }
}
