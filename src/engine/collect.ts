// What a per-file phase gathers for the global step after it, one set of files per input file:
//   exact:   <phase>/collect/exact/<p>/<u>.jsonl  {i, h (XXH64 of the text), id} per record,
//                                                 partition p = low 32 bits of h mod partitions
//   minhash: <phase>/collect/sig/<u>.bin          the records' signatures, k uint32 each, in order
//            <phase>/collect/docs/<u>.jsonl       {i, id, len, short} per record, same order
//            <phase>/collect/buckets/<p>/<u>.bin  band bucket entries (key, band, unit, j) as 4 × uint32,
//                                                 partition p = band key mod partitions
import { join } from "node:path";
import { hex64, loadHasher, xxh64String } from "../lib/hash.js";
import { signerParams } from "../dedup/minhash-stage.js";
import { SignerPool } from "../dedup/pool.js";
import type { BatchResult, SignerParams } from "../dedup/signer.js";
import type { MinhashOptions } from "../dedup/options.js";
import type { DocRecord } from "../types.js";
import type { Collect } from "./plan.js";
import { AtomicStream, unitName } from "./workdir.js";

export interface Collector {
  add(r: DocRecord): Promise<void>;
  /** Completes the unit's files. */
  finish(): Promise<void>;
  abort(): Promise<void>;
}

export const exactFile = (work: string, phase: string, part: number, u: number) => join(work, phase, "collect", "exact", String(part).padStart(5, "0"), `${unitName(u)}.jsonl`);
/** The exact-dups partition of a text hash (hex): its low 32 bits modulo the partitions. */
export const exactPartition = (hex: string, partitions: number) => parseInt(hex.slice(-8), 16) % partitions;
export const sigFile = (work: string, phase: string, u: number) => join(work, phase, "collect", "sig", `${unitName(u)}.bin`);
export const docsFile = (work: string, phase: string, u: number) => join(work, phase, "collect", "docs", `${unitName(u)}.jsonl`);
export const bucketFile = (work: string, phase: string, part: number, u: number) => join(work, phase, "collect", "buckets", String(part).padStart(5, "0"), `${unitName(u)}.bin`);

/** Opens the collector of one unit; `partitions` is the number of bucket tasks; `threads` sign in parallel. */
export async function openCollector(c: Collect, work: string, phase: string, u: number, seed: number, partitions: number, pool?: SignerPool): Promise<Collector> {
  if (c.kind === "exact") {
    await loadHasher();
    const outs: AtomicStream[] = [];
    for (let p = 0; p < partitions; p++) outs.push(await AtomicStream.open(exactFile(work, phase, p, u)));
    return {
      add: (r) => {
        const h = hex64(xxh64String(r.text));
        return outs[exactPartition(h, partitions)].write(JSON.stringify({ i: r.seq, h, id: r.id }) + "\n");
      },
      finish: async () => {
        for (const out of outs) await out.commit();
      },
      abort: async () => {
        for (const out of outs) await out.abort();
      },
    };
  }
  return MinhashCollector.open(c.entry.options as MinhashOptions, work, phase, u, seed, partitions, pool!);
}

export function collectorParams(c: Collect, seed: number): SignerParams | undefined {
  return c.kind === "minhash" ? signerParams(c.entry.options as MinhashOptions, seed) : undefined;
}

const BATCH_DOCS = 256;
const BATCH_CHARS = 1 << 20;

class MinhashCollector implements Collector {
  private batch: DocRecord[] = [];
  private chars = 0;
  private readonly pending: { docs: DocRecord[]; result: Promise<BatchResult> }[] = [];
  private j = 0;
  private readonly bucketBuffers: number[][];

  private constructor(
    private readonly params: SignerParams,
    private readonly u: number,
    private readonly pool: SignerPool,
    private readonly sig: AtomicStream,
    private readonly docs: AtomicStream,
    private readonly buckets: AtomicStream[],
  ) {
    this.bucketBuffers = buckets.map(() => []);
  }

  static async open(o: MinhashOptions, work: string, phase: string, u: number, seed: number, partitions: number, pool: SignerPool): Promise<MinhashCollector> {
    const buckets: AtomicStream[] = [];
    for (let p = 0; p < partitions; p++) buckets.push(await AtomicStream.open(bucketFile(work, phase, p, u)));
    return new MinhashCollector(signerParams(o, seed), u, pool, await AtomicStream.open(sigFile(work, phase, u)), await AtomicStream.open(docsFile(work, phase, u)), buckets);
  }

  async add(r: DocRecord): Promise<void> {
    this.batch.push(r);
    this.chars += r.text.length;
    if (this.batch.length >= BATCH_DOCS || this.chars >= BATCH_CHARS) await this.send(false);
  }

  private async send(drain: boolean): Promise<void> {
    if (this.batch.length > 0) {
      const result = this.pool.submit(this.batch.map((r) => r.text));
      result.catch(() => undefined); // awaited in order below
      this.pending.push({ docs: this.batch, result });
      this.batch = [];
      this.chars = 0;
    }
    while (this.pending.length > (drain ? 0 : Math.max(2, 2 * this.pool.threads))) {
      const { docs, result } = this.pending.shift()!;
      await this.apply(docs, await result);
    }
  }

  private async apply(docs: DocRecord[], res: BatchResult): Promise<void> {
    const { bands } = this.params;
    const parts = this.buckets.length;
    await this.sig.write(new Uint8Array(res.signatures.buffer, res.signatures.byteOffset, res.signatures.byteLength));
    let lines = "";
    for (let i = 0; i < res.count; i++) {
      const r = docs[i];
      lines += JSON.stringify({ i: r.seq, id: r.id, len: r.text.length, short: res.short[i] }) + "\n";
      for (let t = 0; t < bands; t++) {
        const key = res.bandKeys[i * bands + t];
        this.bucketBuffers[key % parts].push(key, t, this.u, this.j);
      }
      this.j++;
    }
    await this.docs.write(lines);
    for (let p = 0; p < parts; p++) {
      const buf = this.bucketBuffers[p];
      if (buf.length >= 1 << 16) {
        await this.buckets[p].write(new Uint8Array(Uint32Array.from(buf).buffer));
        buf.length = 0;
      }
    }
  }

  async finish(): Promise<void> {
    await this.send(true);
    for (let p = 0; p < this.buckets.length; p++) {
      const buf = this.bucketBuffers[p];
      if (buf.length > 0) await this.buckets[p].write(new Uint8Array(Uint32Array.from(buf).buffer));
      buf.length = 0;
      await this.buckets[p].commit();
    }
    await this.sig.commit();
    await this.docs.commit();
  }

  async abort(): Promise<void> {
    for (const b of this.buckets) await b.abort();
    await this.sig.abort();
    await this.docs.abort();
  }
}
