// Near-duplicate pairs across splits: MinHash signatures with LSH bands (the dedup stage's code), train spilled to disk.
import { closeSync, openSync, readSync, rmSync, writeSync } from "node:fs";
import { join } from "node:path";
import { BatchSigner, type SignerParams } from "../dedup/signer.js";
import { estimateJaccard } from "../dedup/signature.js";
import { uint32s, type Grow } from "../lib/grow.js";
import type { NearDupFigures } from "./figures.js";

/** Texts signed per batch. */
const BATCH = 256;
/** Spill write buffer. */
const WRITE_BYTES = 1 << 22;

/** A held-out split's signatures and band buckets (band t, key) → its documents, in memory. */
class HeldOutSignatures {
  readonly signatures: Grow<Uint32Array> = uint32s();
  readonly bandKeys: Grow<Uint32Array> = uint32s();
  readonly buckets = new Map<number, number[]>();
  documents = 0;

  constructor(private readonly bands: number) {}

  add(signatures: Uint32Array, sAt: number, k: number, bandKeys: Uint32Array, bAt: number): void {
    const d = this.documents++;
    for (let j = 0; j < k; j++) this.signatures.push(signatures[sAt + j]);
    for (let t = 0; t < this.bands; t++) {
      const key = bandKeys[bAt + t];
      this.bandKeys.push(key);
      // Band number above the 32 key bits: the same key in two bands is two buckets. Exact in a double (< 2^53).
      const b = t * 4294967296 + key;
      const list = this.buckets.get(b);
      if (list) list.push(d);
      else this.buckets.set(b, [d]);
    }
  }
}

export type { NearDupFigures } from "./figures.js";

/**
 * Signs every document; held-out signatures and buckets stay in memory, train's (signature + band
 * keys, 4·(k + bands) bytes a document) go to a temporary file, read once at `finish`, so memory
 * does not grow with train. A pair counts when the two documents share a band bucket (an LSH
 * candidate) and their signatures agree in at least `threshold` of the k positions — the dedup
 * stage's own rule, so a pipeline that removed near-duplicates should show none here.
 */
export class NearDupCounter {
  private readonly signer: BatchSigner;
  private readonly k: number;
  private readonly bands: number;
  private readonly heldOut = new Map<string, HeldOutSignatures>();
  private pending: { split: string; text: string }[] = [];
  private fd: number | undefined;
  private readonly spillPath: string;
  private out: Buffer;
  private outUsed = 0;
  private trainDocs = 0;

  constructor(
    params: SignerParams,
    readonly threshold: number,
    tmpDir: string,
    /** Size of the spill's write buffer (small in tests, to exercise the file). */
    bufferBytes = WRITE_BYTES,
  ) {
    this.out = Buffer.alloc(bufferBytes);
    this.signer = new BatchSigner(params);
    this.k = params.permutations;
    this.bands = params.bands;
    this.spillPath = join(tmpDir, "train-signatures.bin");
  }

  add(split: string, text: string): void {
    this.pending.push({ split, text });
    if (this.pending.length >= BATCH) this.flush();
  }

  private flush(): void {
    if (this.pending.length === 0) return;
    const batch = this.pending;
    this.pending = [];
    const res = this.signer.sign(batch.map((p) => p.text));
    const { k, bands } = this;
    for (let i = 0; i < batch.length; i++) {
      const split = batch[i].split;
      if (split === "train") {
        this.writeRecord(res.bandKeys.subarray(i * bands, (i + 1) * bands), res.signatures.subarray(i * k, (i + 1) * k));
        this.trainDocs++;
      } else {
        let h = this.heldOut.get(split);
        if (!h) this.heldOut.set(split, (h = new HeldOutSignatures(bands)));
        h.add(res.signatures, i * k, k, res.bandKeys, i * bands);
      }
    }
  }

  /** Appends one train document (band keys, then signature); the file only ever holds whole documents. */
  private writeRecord(keys: Uint32Array, sig: Uint32Array): void {
    const bytes = keys.byteLength + sig.byteLength;
    if (this.outUsed + bytes > this.out.length) this.drain();
    if (bytes > this.out.length) {
      this.writeDirect(keys);
      this.writeDirect(sig);
      return;
    }
    for (const part of [keys, sig]) {
      Buffer.from(part.buffer, part.byteOffset, part.byteLength).copy(this.out, this.outUsed);
      this.outUsed += part.byteLength;
    }
  }

  private writeDirect(words: Uint32Array): void {
    this.fd ??= openSync(this.spillPath, "w+");
    const b = Buffer.from(words.buffer, words.byteOffset, words.byteLength);
    let off = 0;
    while (off < b.length) off += writeSync(this.fd, b, off, b.length - off);
  }

  private drain(): void {
    this.fd ??= openSync(this.spillPath, "w+");
    let off = 0;
    while (off < this.outUsed) off += writeSync(this.fd, this.out, off, this.outUsed - off);
    this.outUsed = 0;
  }

  /** Figures for every (reference, held-out) pair of splits in `pairs`; removes the temporary file. */
  finish(pairs: [string, string][]): Map<string, NearDupFigures> {
    this.flush();
    const result = new Map<string, NearDupFigures>();
    const jobs: { hb: HeldOutSignatures; fig: NearDupFigures; stamp: Int32Array; hit: Uint8Array; a: string }[] = [];
    for (const [a, b] of pairs) {
      const fig = { pairs: 0, documents: 0 };
      result.set(`${a}\u0000${b}`, fig);
      const hb = this.heldOut.get(b);
      if (hb) jobs.push({ hb, fig, a, stamp: new Int32Array(hb.documents).fill(-1), hit: new Uint8Array(hb.documents) });
    }
    try {
      // Train is read back once for all held-out splits; a held-out reference is in memory.
      const fromTrain = jobs.filter((j) => j.a === "train");
      if (fromTrain.length > 0)
        this.eachTrain((sig, sAt, keys, kAt, doc) => {
          for (const j of fromTrain) j.fig.pairs += this.matches(j.hb, sig, sAt, keys, kAt, doc, j.stamp, j.hit);
        });
      for (const j of jobs) {
        if (j.a === "train") continue;
        const ha = this.heldOut.get(j.a);
        if (!ha) continue;
        const sig = ha.signatures.view();
        const keys = ha.bandKeys.view();
        for (let d = 0; d < ha.documents; d++) j.fig.pairs += this.matches(j.hb, sig, d * this.k, keys, d * this.bands, d, j.stamp, j.hit);
      }
      for (const j of jobs) for (let d = 0; d < j.hb.documents; d++) j.fig.documents += j.hit[d];
    } finally {
      if (this.fd !== undefined) closeSync(this.fd);
      this.fd = undefined;
      rmSync(this.spillPath, { force: true });
    }
    return result;
  }

  /** Candidates of one reference document in `hb`'s buckets, each checked once; returns the confirmed pairs. */
  private matches(hb: HeldOutSignatures, sig: Uint32Array, sAt: number, keys: Uint32Array, kAt: number, doc: number, stamp: Int32Array, hit: Uint8Array): number {
    let pairs = 0;
    const hsig = hb.signatures.view();
    for (let t = 0; t < this.bands; t++) {
      const list = hb.buckets.get(t * 4294967296 + keys[kAt + t]);
      if (!list) continue;
      for (const c of list) {
        if (stamp[c] === doc) continue;
        stamp[c] = doc;
        if (estimateJaccard(sig, sAt, hsig, c * this.k, this.k) >= this.threshold) {
          pairs++;
          hit[c] = 1;
        }
      }
    }
    return pairs;
  }

  /** Reads the train spill back: each document's band keys and signature, in arrival order. */
  private eachTrain(each: (sig: Uint32Array, sAt: number, keys: Uint32Array, kAt: number, doc: number) => void): void {
    const rec = this.bands + this.k;
    const perChunk = Math.max(1, Math.floor(this.out.length / (4 * rec)));
    const words = new Uint32Array(perChunk * rec);
    const buf = Buffer.from(words.buffer);
    let doc = 0;
    const inMemory = () => {
      // Whatever is still in the write buffer follows the file's contents.
      const w = new Uint32Array(this.out.buffer.slice(this.out.byteOffset, this.out.byteOffset + this.outUsed));
      for (let i = 0; i * rec < w.length; i++) each(w, i * rec + this.bands, w, i * rec, doc++);
    };
    if (this.fd !== undefined) {
      let pos = 0;
      for (;;) {
        let got = 0;
        while (got < buf.length) {
          const n = readSync(this.fd, buf, got, buf.length - got, pos + got);
          if (n === 0) break;
          got += n;
        }
        if (got === 0) break;
        pos += got;
        const docs = got / (4 * rec);
        for (let i = 0; i < docs; i++) each(words, i * rec + this.bands, words, i * rec, doc++);
        if (got < buf.length) break;
      }
    }
    inMemory();
    if (doc !== this.trainDocs) throw new Error(`overlap: read back ${doc} train signatures, wrote ${this.trainDocs}`);
  }
}
