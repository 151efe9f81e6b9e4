// The per-document work of pass 1 (shingles → signature → band keys) for a batch of texts; runs in a worker or in-thread.
import { Shingler, type ShingleSpec } from "./shingles.js";
import { MinhashSigner } from "./signature.js";
import { deriveSeed, xxh32Lanes } from "./xxh32.js";

/** Everything a worker needs to compute exactly what the main thread would: plain data, cloneable. */
export interface SignerParams {
  shingle: ShingleSpec;
  permutations: number;
  bands: number;
  rows: number;
  seed: number;
}

/** One batch's output, in the batch's order; the buffers are transferred back from a worker without copying. */
export interface BatchResult {
  count: number;
  /** count × permutations signature values. */
  signatures: Uint32Array;
  /** count × bands band keys: XXH32 of the band's rows, seeded per band. */
  bandKeys: Uint32Array;
  /** 1 where the text had no shingle (shorter than one n-gram) and got a fingerprint signature. */
  short: Uint8Array;
}

export class BatchSigner {
  private readonly shingler: Shingler;
  private readonly signer: MinhashSigner;
  private readonly bandSeeds: Uint32Array;

  constructor(readonly params: SignerParams) {
    this.shingler = new Shingler(params.shingle, params.seed);
    this.signer = new MinhashSigner(params.permutations, params.seed);
    this.bandSeeds = new Uint32Array(params.bands);
    for (let t = 0; t < params.bands; t++) this.bandSeeds[t] = deriveSeed(params.seed, 100 + t);
  }

  sign(texts: string[]): BatchResult {
    const { permutations: k, bands } = this.params;
    const count = texts.length;
    const signatures = new Uint32Array(count * k);
    const bandKeys = new Uint32Array(count * bands);
    const short = new Uint8Array(count);
    const sh = this.shingler;
    for (let i = 0; i < count; i++) {
      const n = sh.shingle(texts[i]);
      if (n > 0) this.signer.sign(sh.hashes, n, signatures, i * k);
      else {
        short[i] = 1;
        this.signer.signFingerprint(sh.keyA, sh.keyB, signatures, i * k);
      }
      this.bandKeysOf(signatures, i, bandKeys);
    }
    return { count, signatures, bandKeys, short };
  }

  /** Writes the band keys of signature row i of `signatures` to row i of `bandKeys`. */
  bandKeysOf(signatures: Uint32Array, i: number, bandKeys: Uint32Array): void {
    const { permutations: k, bands, rows } = this.params;
    for (let t = 0; t < bands; t++) bandKeys[i * bands + t] = xxh32Lanes(signatures, i * k + t * rows, rows, this.bandSeeds[t]);
  }
}
