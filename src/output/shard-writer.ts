// Collects packed rows of one split into shards and writes them as .npy files with their statistics.
import { mkdir } from "node:fs/promises";
import { join } from "node:path";
import { dtypeBytes, encodeValues, npyHeader, type Dtype } from "./npy.js";
import { writeFileAtomic } from "./atomic.js";
import { hex64, loadHasher } from "../lib/hash.js";
import type { HistogramBucket } from "../pack/length-histogram.js";
import type { RowPiece } from "../pack/packer.js";
import { originLines, type SegmentOrigin } from "../pack/origins.js";
import { clearUntrained } from "../chat/layout.js";
import type { ConversationStats } from "../chat/tally.js";

export type Emit = "positions" | "target_mask" | "cu_seqlens";

export interface WrittenFile {
  path: string; // relative to the output dir, forward slashes
  size: number;
  xxh64: string;
}

export interface ShardEntry {
  blocks: number;
  tokens: string;
  segments: string;
  positions?: string;
  target_mask?: string;
  cu_seqlens?: string;
  cu_offsets?: string;
  /** The origins index: the input record of every document piece (JSON lines). */
  origins?: string;
}

export interface SplitStats {
  documents: number;
  blocks: number;
  tokens: number;
  target_tokens: number;
  padding_tokens: number;
  /** padding_tokens / (blocks × length); 0 for an empty split. */
  padding_fraction: number;
  /** Documents placed in two or more pieces (rows). */
  cut_documents: number;
  /** Tokens that are not targets only because a cut put the token before them in another row (one per cut). */
  targets_lost_to_cuts: number;
  /** Tokens in the second and later pieces of cut documents: they see only part of their document. */
  continuation_tokens: number;
  /** Document lengths in tokens, power-of-two buckets [min, max]. */
  length_histogram: HistogramBucket[];
  shards: ShardEntry[];
  /** Present only when the split holds conversations: what packing did with them (src/chat/tally.ts). */
  conversations?: ConversationStats;
}

export interface ShardWriterOptions {
  outDir: string;
  split: string;
  length: number;
  shardBlocks: number;
  tokenDtype: Dtype;
  segmentDtype: Dtype;
  emit: readonly Emit[];
  /** Put before every shard's number in its file names (the packing group: "00003-"). */
  prefix?: string;
  /** Write `<stem>.origins.jsonl` beside each shard from the rows' pieces (their `doc` a SegmentOrigin). */
  origins?: boolean;
}

/** Rows a split's first buffer holds, and the factor it grows by: a split that fills a 4096-row shard copies 1,280 rows on the way. */
const FIRST_ROWS = 256;
const GROWTH = 4;

/**
 * A shard's column of ids, held in the type it is written as: 16-bit ids take half the memory of
 * 32-bit ones and are written without a conversion (a shard of 4,096 blocks of 2,048: 16 MiB a column, not 32).
 */
type Column = Uint16Array | Uint32Array;
const column = (dtype: Dtype, n: number): Column => (dtype === "uint16" ? new Uint16Array(n) : new Uint32Array(n));

export class ShardWriter {
  private readonly o: ShardWriterOptions;
  private tokens: Column;
  private segments: Column;
  private rows = 0;
  private pieces: (readonly RowPiece[])[] = [];
  /**
   * 0 where a token may not be a target whatever its segment says (a conversation's tokens outside
   * the trained roles); made for a shard only once a conversation reaches it, so a shard without
   * one is written exactly as before.
   */
  private learn: Uint8Array | undefined;
  private readonly full: { tokens: Column; segments: Column; learn?: Uint8Array; rows: number; pieces: (readonly RowPiece[])[] }[] = [];
  private shardIndex = 0;
  /** The shard being written, if any. */
  private writing: Promise<void> = Promise.resolve();
  readonly files: WrittenFile[] = [];
  /**
   * Conversation pieces after a cut whose first token is not trained on: the cut cost no target there
   * (the packer counts one lost target per cut; the pack phase takes these off).
   */
  untrainedCutStarts = 0;
  // Key order here is the order in manifest.json; the packer fills documents and the cut counts.
  readonly stats: SplitStats = {
    documents: 0,
    blocks: 0,
    tokens: 0,
    target_tokens: 0,
    padding_tokens: 0,
    padding_fraction: 0,
    cut_documents: 0,
    targets_lost_to_cuts: 0,
    continuation_tokens: 0,
    length_histogram: [],
    shards: [],
  };

  constructor(o: ShardWriterOptions) {
    this.o = o;
    // Room for a few rows at first, grown as rows come, up to a shard: a split that gets few rows
    // in a packing group (held-out text, a small group) never holds a whole shard's arrays.
    const rows = Math.min(o.shardBlocks, FIRST_ROWS);
    this.tokens = column(o.tokenDtype, rows * o.length);
    this.segments = column(o.segmentDtype, rows * o.length);
  }

  /** Copies one row in (sync, called by the packer); full shards wait for `writePending`. */
  addRow(tokens: Uint32Array, segments: Uint32Array, pieces: readonly RowPiece[] = []): void {
    const L = this.o.length;
    if ((this.rows + 1) * L > this.tokens.length) this.grow();
    this.tokens.set(tokens, this.rows * L);
    this.segments.set(segments, this.rows * L);
    if (this.o.origins) this.pieces.push(pieces);
    let learn: Uint8Array | undefined;
    if (pieces.some((p) => (p.doc as SegmentOrigin | undefined)?.chat)) {
      this.learn ??= new Uint8Array(this.tokens.length).fill(1);
      learn = this.learn.subarray(this.rows * L, (this.rows + 1) * L);
      learnOfRow(segments, pieces, learn);
      let start = 0;
      for (let k = 0; k < pieces.length; k++) {
        if (pieces[k].offset > 0 && (pieces[k].doc as SegmentOrigin | undefined)?.chat && learn[start] === 0) this.untrainedCutStarts++;
        while (start < L && segments[start] === k + 1) start++;
      }
    }
    this.rows++;
    this.countRow(segments, learn);
    if (this.rows === this.o.shardBlocks) {
      this.full.push({ tokens: this.tokens, segments: this.segments, learn: this.learn, rows: this.rows, pieces: this.pieces });
      // The next shard of a split that filled one is likely full too: its whole size at once.
      this.tokens = column(this.o.tokenDtype, this.o.shardBlocks * L);
      this.segments = column(this.o.segmentDtype, this.o.shardBlocks * L);
      this.learn = undefined;
      this.pieces = [];
      this.rows = 0;
    }
  }

  private grow(): void {
    const rows = Math.min(this.o.shardBlocks, GROWTH * (this.tokens.length / this.o.length));
    const tokens = column(this.o.tokenDtype, rows * this.o.length);
    const segments = column(this.o.segmentDtype, rows * this.o.length);
    tokens.set(this.tokens);
    segments.set(this.segments);
    this.tokens = tokens;
    this.segments = segments;
    if (this.learn) {
      const learn = new Uint8Array(rows * this.o.length).fill(1);
      learn.set(this.learn);
      this.learn = learn;
    }
  }

  private countRow(seg: Uint32Array, learn?: Uint8Array): void {
    const s = this.stats;
    s.blocks++;
    // A token is a target when the token before it is of the same document (segment ids are never -1).
    let padding = 0;
    let targets = 0;
    let prev = -1;
    for (let i = 0; i < seg.length; i++) {
      const v = seg[i];
      if (v === 0) padding++;
      else if (v === prev && (!learn || learn[i])) targets++;
      prev = v;
    }
    s.padding_tokens += padding;
    s.tokens += seg.length - padding;
    s.target_tokens += targets;
  }

  get pending(): number {
    return this.full.length;
  }

  /**
   * Starts writing the full shards, one at a time in order; returns once the shard before the last
   * one started is written. So packing goes on while a shard goes to disk (and is synced), and at
   * most one full shard waits in memory besides the one being filled.
   */
  async writePending(): Promise<void> {
    while (this.full.length > 0) {
      const shard = this.full.shift()!;
      await this.writing;
      this.writing = this.writeShard(shard.tokens, shard.segments, shard.rows, shard.pieces, shard.learn);
      // Observed by the next writePending or by finish.
      this.writing.catch(() => {});
    }
  }

  /** Writes what is left (a final, shorter shard) once the shards before it are written. */
  async finish(): Promise<void> {
    await this.writePending();
    await this.writing;
    if (this.rows > 0) await this.writeShard(this.tokens, this.segments, this.rows, this.pieces, this.learn);
    this.rows = 0;
    this.learn = undefined;
    this.pieces = [];
    const s = this.stats;
    s.padding_fraction = paddingFraction(s.padding_tokens, s.blocks, this.o.length);
  }

  private async writeShard(tokens: Column, segments: Column, rows: number, pieces: (readonly RowPiece[])[], learn?: Uint8Array): Promise<void> {
    const L = this.o.length;
    const dir = join(this.o.outDir, this.o.split);
    await mkdir(dir, { recursive: true });
    const stem = `${this.o.prefix ?? ""}${String(this.shardIndex++).padStart(6, "0")}`;
    const n = rows * L;
    const tok = tokens.subarray(0, n);
    const seg = segments.subarray(0, n);
    const entry: ShardEntry = {
      blocks: rows,
      tokens: await this.writeArray(`${stem}.tokens.npy`, tok, this.o.tokenDtype, [rows, L]),
      segments: await this.writeArray(`${stem}.segments.npy`, seg, this.o.segmentDtype, [rows, L]),
    };
    if (this.o.emit.includes("positions")) entry.positions = await this.writeArray(`${stem}.positions.npy`, positionsOf(seg, L), this.o.segmentDtype, [rows, L]);
    if (this.o.emit.includes("target_mask")) entry.target_mask = await this.writeArray(`${stem}.target_mask.npy`, targetMaskOf(seg, L, learn), "uint8", [rows, L]);
    if (this.o.emit.includes("cu_seqlens")) {
      const { lens, offsets } = cuSeqlensOf(seg, L);
      entry.cu_seqlens = await this.writeArray(`${stem}.cu_seqlens.npy`, lens, "int32", [lens.length]);
      entry.cu_offsets = await this.writeArray(`${stem}.cu_offsets.npy`, offsets, "int64", [offsets.length]);
    }
    if (this.o.origins) {
      let text = "";
      for (let r = 0; r < rows; r++) text += originLines(r, seg.subarray(r * L, (r + 1) * L), pieces[r]);
      entry.origins = await this.writeBytes(`${stem}.origins.jsonl`, Buffer.from(text, "utf8"));
    }
    this.stats.shards.push(entry);
  }

  private async writeBytes(name: string, bytes: Buffer): Promise<string> {
    const rel = `${this.o.split}/${name}`;
    await writeFileAtomic(join(this.o.outDir, rel), [bytes]);
    const { create64 } = await loadHasher();
    this.files.push({ path: rel, size: bytes.length, xxh64: hex64(create64(0n).update(bytes).digest()) });
    return rel;
  }

  private async writeArray(name: string, values: Column, dtype: Dtype, shape: number[]): Promise<string> {
    const rel = `${this.o.split}/${name}`;
    const header = npyHeader(dtype, shape);
    const body = encodeValues(values, dtype);
    if (body.byteLength !== values.length * dtypeBytes(dtype)) throw new Error("npy body size mismatch");
    await writeFileAtomic(join(this.o.outDir, rel), [header, body]);
    const { create64 } = await loadHasher();
    const h = create64(0n).update(header).update(body).digest();
    this.files.push({ path: rel, size: header.length + body.byteLength, xxh64: hex64(h) });
    return rel;
  }
}

/** padding / (blocks × length), rounded so the manifest shows a readable number (the exact counts sit beside it). */
export function paddingFraction(padding: number, blocks: number, length: number): number {
  return blocks === 0 ? 0 : Math.round((padding / (blocks * length)) * 1e6) / 1e6;
}

/** Position of each token within its document (restarting at 0 at each segment start); 0 on padding. */
export function positionsOf(seg: Uint16Array | Uint32Array, L: number): Uint32Array {
  const out = new Uint32Array(seg.length);
  for (let i = 0; i < seg.length; i++) {
    const start = i % L === 0 || seg[i] !== seg[i - 1];
    out[i] = seg[i] === 0 ? 0 : start ? 0 : out[i - 1] + 1;
  }
  return out;
}

/**
 * 1 where the token's prediction counts in the loss: same non-zero segment as the token before it in
 * the row, and, given `learn`, 1 there too (a conversation's trained tokens: see learnOfRow).
 */
export function targetMaskOf(seg: Uint16Array | Uint32Array, L: number, learn?: ArrayLike<number>): Uint32Array {
  const out = new Uint32Array(seg.length);
  for (let i = 0; i < seg.length; i++) out[i] = seg[i] !== 0 && i % L !== 0 && seg[i - 1] === seg[i] && (!learn || learn[i] !== 0) ? 1 : 0;
  return out;
}

/**
 * A row's learn mask (1 where a token may be a target): 1 for every piece of a plain document, and
 * for a conversation's piece 1 only on its trained roles' tokens (text and closing marker), from the
 * layout its origin carries. Pieces are the row's segments in order (segment k is piece k − 1).
 */
export function learnOfRow(seg: ArrayLike<number>, pieces: readonly RowPiece[], out: Uint8Array): void {
  out.fill(1);
  let start = 0;
  for (let k = 0; k < pieces.length; k++) {
    let end = start;
    while (end < seg.length && seg[end] === k + 1) end++;
    const chat = (pieces[k].doc as SegmentOrigin | undefined)?.chat;
    if (chat) clearUntrained(chat, pieces[k].offset, end - start, out, start);
    start = end;
  }
}

/**
 * Per row, the cumulative document lengths [0, l1, l1+l2, …] (padding excluded), flattened; row r's
 * entries are lens[offsets[r] .. offsets[r+1]).
 */
export function cuSeqlensOf(seg: Uint16Array | Uint32Array, L: number): { lens: Uint32Array; offsets: Uint32Array } {
  const lens: number[] = [];
  const offsets: number[] = [0];
  for (let r = 0; r * L < seg.length; r++) {
    lens.push(0);
    let acc = 0;
    for (let i = r * L; i < (r + 1) * L; i++) {
      if (seg[i] === 0) continue;
      acc++;
      const end = i + 1 === (r + 1) * L || seg[i + 1] !== seg[i];
      if (end) lens.push(acc);
    }
    offsets.push(lens.length);
  }
  return { lens: Uint32Array.from(lens), offsets: Uint32Array.from(offsets) };
}
