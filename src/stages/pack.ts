// pack: cuts each split's token stream into fixed-length rows with per-row segment ids (the run's sink).
import { defineStage } from "./stage.js";
import { field, list, num, obj, str, type Infer } from "../pipeline/schema.js";

export const packOptions = obj({
  length: field(num({ integer: true, min: 2, max: 1 << 20 }), { default: 1024 }),
  strategy: field(str({ oneOf: ["concat"] }), { default: "concat" }),
  emit: field(list(str({ oneOf: ["positions", "target_mask", "cu_seqlens"] })), { default: [] }),
});
export type PackOptions = Infer<typeof packOptions>;

/** Receives full rows: `tokens` and `segments` are views valid only during the call. */
export type RowSink = (tokens: Uint32Array, segments: Uint32Array) => void;

/** Turns a split's documents (token arrays) into rows; one packer per split. */
export interface Packer {
  add(doc: Uint32Array): void;
  /** Emits whatever is still buffered (padded). */
  finish(): void;
  readonly documents: number;
  /** Documents split across two or more rows. */
  readonly cutDocuments: number;
}

export function createPacker(o: PackOptions, padId: number, sink: RowSink): Packer {
  switch (o.strategy) {
    case "concat":
      return new ConcatPacker(o.length, padId, sink);
    default:
      throw new Error(`unknown packing strategy ${String(o.strategy)}`);
  }
}

/**
 * `concat`: documents back to back (each already ends in EOS when the tokenize stage adds it),
 * cut every `length` tokens; a document may continue in the next row, where it starts a new
 * segment (1). Only the last row of a split is padded (segment 0, token = pad id).
 */
export class ConcatPacker implements Packer {
  readonly length: number;
  readonly padId: number;
  private readonly tokens: Uint32Array;
  private readonly segments: Uint32Array;
  private fill = 0;
  private segment = 0;
  private readonly sink: RowSink;
  documents = 0;
  /** Documents split across two or more rows. */
  cutDocuments = 0;

  constructor(length: number, padId: number, sink: RowSink) {
    this.length = length;
    this.padId = padId;
    this.tokens = new Uint32Array(length);
    this.segments = new Uint32Array(length);
    this.sink = sink;
  }

  add(doc: Uint32Array): void {
    if (doc.length === 0) return;
    this.documents++;
    let at = 0;
    this.segment++;
    if (this.fill + doc.length > this.length) this.cutDocuments++;
    while (at < doc.length) {
      const take = Math.min(this.length - this.fill, doc.length - at);
      this.tokens.set(doc.subarray(at, at + take), this.fill);
      this.segments.fill(this.segment, this.fill, this.fill + take);
      this.fill += take;
      at += take;
      if (this.fill === this.length) {
        this.flushRow();
        if (at < doc.length) this.segment = 1;
      }
    }
  }

  private flushRow(): void {
    this.sink(this.tokens, this.segments);
    this.fill = 0;
    this.segment = 0;
  }

  /** Pads and emits the last partial row, if any. */
  finish(): void {
    if (this.fill === 0) return;
    this.tokens.fill(this.padId, this.fill);
    this.segments.fill(0, this.fill);
    this.flushRow();
  }
}

export default defineStage({
  name: "pack",
  summary: "fixed-length rows with document segment ids",
  options: packOptions,
  // The runner drives packing (one packer per split); as a stage it passes records through.
  create() {
    return (input) => input;
  },
});
