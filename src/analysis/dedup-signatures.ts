// The near-duplicate figure between splits signs every kept document with the settings of the
// pipeline's last MinHash dedup stage (overlap-settings.ts), and that stage has already signed the
// same documents: its collector keeps each unit's signatures (sig.bin) and, per document, its row
// number and text length (docs.jsonl, src/dedup/minhash.ts). When no stage after it can change a
// text, the pack phase hands those signatures to the overlap collector instead of signing again —
// the same values, since a signature is a function of the text and the settings alone. Each one
// is also checked against the record: same row number, same length in UTF-8 bytes; any other
// record is signed as before. Signing is about a third of the overlap collection's time.
import { open, stat, type FileHandle } from "node:fs/promises";
import { jsonLines } from "../lib/json-lines.js";
import type { PipelineConfig } from "../pipeline/config.js";
import type { KeyedDirs } from "../stages/keyed.js";
import type { DocRecord } from "../types.js";
import { overlapApplies } from "./overlap-settings.js";

/** Stages that pass every record's text on unchanged (they drop records, add fields or tokens). */
const KEEP_TEXT: ReadonlySet<string> = new Set(["filter", "language", "dedup", "split", "decontaminate", "tokenize", "pack"]);

/** The index of the MinHash dedup stage whose signatures the near-duplicate figure can take, if any. */
export function signingStage(config: PipelineConfig): number | undefined {
  if (!overlapApplies(config) || !config.overlap.near_duplicates) return undefined;
  const stages = config.stages;
  let last = -1;
  for (let i = 0; i < stages.length; i++) if (stages[i].name === "dedup" && stages[i].options.method === "minhash") last = i;
  if (last < 0) return undefined;
  return stages.slice(last + 1).every((e) => KEEP_TEXT.has(e.name)) ? last : undefined;
}

/** A signature handed from the pack phase to the overlap collector with the record it belongs to. */
const given = new WeakMap<DocRecord, Uint32Array>();

export function giveSignature(r: DocRecord, signature: Uint32Array): void {
  given.set(r, signature);
}

export function givenSignature(r: DocRecord): Uint32Array | undefined {
  return given.get(r);
}

/** Signatures read from sig.bin at a time (a unit of a compressed file can hold millions of documents); tests shrink it. */
export const signatureLimits = { windowDocs: 8192 };

/** One unit's signatures from the dedup stage's files, read as records come in row order. */
export class UnitSignatures {
  /** Document j of the unit is the next one not yet passed; `doc` is it, parsed (a record may stop short of it). */
  private j = 0;
  private doc: { i: number; b?: number } | undefined;
  /** Signatures of documents [from, from + window.length / k). */
  private window = new Uint32Array(0);
  private from = 0;

  private constructor(
    private readonly fh: FileHandle,
    private readonly docs: AsyncIterator<string>,
    private readonly count: number,
    private readonly k: number,
  ) {}

  /** Undefined when the unit's files are not there (no record of it reached the stage), or are not k values a row. */
  static async open(dirs: KeyedDirs, u: number, k: number): Promise<UnitSignatures | undefined> {
    if (!(await stat(dirs.path("docs.jsonl", u)).catch(() => undefined))) return undefined;
    const fh = await open(dirs.path("sig.bin", u), "r").catch(() => undefined);
    if (!fh) return undefined;
    const size = (await fh.stat()).size;
    if (size % (4 * k) !== 0) {
      await fh.close();
      return undefined;
    }
    return new UnitSignatures(fh, jsonLines(dirs.path("docs.jsonl", u))[Symbol.asyncIterator](), Math.floor(size / (4 * k)), k);
  }

  /** The signature the stage made for record r (its row and UTF-8 length must match), or undefined. */
  async find(r: DocRecord): Promise<Uint32Array | undefined> {
    while (this.j < this.count) {
      if (!this.doc) {
        const next = await this.docs.next();
        if (next.done) return undefined;
        this.doc = JSON.parse(next.value) as { i: number; b?: number };
      }
      const doc = this.doc;
      if (doc.i > r.seq) return undefined;
      const j = this.j++;
      this.doc = undefined;
      if (doc.i === r.seq) return doc.b === (r.utf8 ? r.utf8.length : Buffer.byteLength(r.text, "utf8")) ? this.row(j) : undefined;
    }
    return undefined;
  }

  /** Signature j, from the window (read anew when j is past it). */
  private async row(j: number): Promise<Uint32Array> {
    const k = this.k;
    if (j >= this.from + this.window.length / k) {
      const n = Math.min(signatureLimits.windowDocs, this.count - j);
      const buf = Buffer.allocUnsafeSlow(n * k * 4);
      for (let at = 0; at < buf.length; ) {
        const { bytesRead } = await this.fh.read(buf, at, buf.length - at, j * k * 4 + at);
        if (bytesRead === 0) throw new Error(`${n * k * 4 - at} bytes missing from a unit's signatures`);
        at += bytesRead;
      }
      this.window = new Uint32Array(buf.buffer, buf.byteOffset, n * k);
      this.from = j;
    }
    // A view: every window is memory of its own, never overwritten, so it stays valid as the window moves on.
    return this.window.subarray((j - this.from) * k, (j - this.from + 1) * k);
  }

  async close(): Promise<void> {
    await this.fh.close();
    await this.docs.return?.();
  }
}
