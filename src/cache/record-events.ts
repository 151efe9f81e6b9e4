// The unit files of a build's phases (and the read phase's cache entries): one JSON line per row
// of an input file (or part) — a record, a drop or a bad row — in row order.
import { open } from "node:fs/promises";
import type { DocRecord } from "../types.js";
import type { QuarantineEntry } from "../sources/source.js";

// `i` is the row's place in its input file (0-based, bad rows counted): the order the ledger follows.
export type UnitEvent =
  | { k: "bad"; i: number; entry: QuarantineEntry }
  | { k: "drop"; i: number; id: string; source: string; file: string; line: number; reason: string; detail?: Record<string, unknown> }
  | { k: "rec"; i: number; id: string; source: string; file: string; line: number; text: string; meta: Record<string, unknown>; split?: string; cluster?: string; tokens?: string }
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
  return {
    k: "rec",
    i: r.seq,
    id: r.id,
    source: r.source,
    file: r.origin.file,
    line: r.origin.line,
    text: r.text,
    meta: r.meta,
    ...(r.split !== undefined ? { split: r.split } : {}),
    ...(r.cluster !== undefined ? { cluster: r.cluster } : {}),
    ...(r.tokens ? { tokens: tokensToText(r.tokens) } : {}),
  };
}

export function dropEvent(r: DocRecord, reason: string, detail?: Record<string, unknown>): UnitEvent {
  return { k: "drop", i: r.seq, id: r.id, source: r.source, file: r.origin.file, line: r.origin.line, reason, ...(detail ? { detail } : {}) };
}

/** The record an event carries, `seq` being its row in the file. */
export function eventRecord(e: Extract<UnitEvent, { k: "rec" }>): DocRecord {
  const r: DocRecord = { id: e.id, source: e.source, text: e.text, meta: e.meta, origin: { file: e.file, line: e.line }, seq: e.i };
  if (e.split !== undefined) r.split = e.split;
  if (e.cluster !== undefined) r.cluster = e.cluster;
  if (e.tokens !== undefined) r.tokens = tokensFromText(e.tokens);
  return r;
}

export async function* readEvents(path: string): AsyncGenerator<UnitEvent> {
  for await (const line of jsonLines(path)) yield JSON.parse(line) as UnitEvent;
}

/**
 * The lines of a file we wrote (JSON lines: "\n" ends a line, never inside one), read in large
 * chunks and split on the newline byte: readline's decoder and line regex cost more than parsing.
 */
export async function* jsonLines(path: string): AsyncGenerator<string> {
  const fh = await open(path, "r");
  try {
    let buf = Buffer.allocUnsafe(1 << 22);
    let filled = 0;
    for (;;) {
      if (filled === buf.length) {
        const bigger = Buffer.allocUnsafe(buf.length * 2);
        buf.copy(bigger, 0, 0, filled);
        buf = bigger;
      }
      const { bytesRead } = await fh.read(buf, filled, buf.length - filled, null);
      if (bytesRead === 0) break;
      const end = filled + bytesRead;
      let start = 0;
      for (let nl = buf.indexOf(10, filled); nl >= 0 && nl < end; nl = buf.indexOf(10, start)) {
        if (nl > start) yield buf.toString("utf8", start, nl);
        start = nl + 1;
        if (start >= end) break;
      }
      // Keep the unfinished line at the front for the next read.
      filled = end - start;
      if (start > 0 && filled > 0) buf.copy(buf, 0, start, end);
    }
    if (filled > 0) yield buf.toString("utf8", 0, filled);
  } finally {
    await fh.close();
  }
}
