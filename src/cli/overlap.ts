// `siftpack overlap DIR`: overlap between splits from the manifest (n-grams, exact and near duplicates, unigram shift); a CI gate.
import type { CommandModule } from "yargs";
import { readManifest } from "../output/manifest.js";
import { SiftpackError } from "../errors.js";
import { table } from "./summary.js";
import type { OverlapFigures, PairFigures } from "../overlap/split-overlap.js";

interface Args {
  dir: string;
  ngram?: number;
  json?: boolean;
  "max-ngram-overlap"?: number;
}

/** A fraction as a percentage with three significant digits ("0%" for zero, so a clean split reads as such). */
export function percent(x: number): string {
  return x === 0 ? "0%" : `${Number((100 * x).toPrecision(3))}%`;
}

function bits(x: number): string {
  return x.toFixed(4);
}

export function formatOverlap(dir: string, f: OverlapFigures): string {
  const n = f.ngram;
  let out = `${dir}: overlap between splits\n`;
  const ts = f.train_set;
  out += `  n-grams: word ${n}-grams (${f.words}); train looked up ${ts.kind === "exact" ? "exactly" : `in a Bloom filter of ${ts.bits} bits, false-positive rate ${ts.false_positive_rate}`}\n`;
  const nd = f.near_duplicates;
  out +=
    "unavailable" in nd
      ? `  near-duplicates: not counted (${nd.unavailable})\n`
      : `  near-duplicates: MinHash ${nd.shingle} ${nd.ngram}-grams, estimated Jaccard ≥ ${nd.threshold}, ${nd.permutations} permutations, ${nd.bands} bands × ${nd.rows} rows; settings from ${nd.basis}\n`;
  out += `  unigram model: add-one smoothed over ${f.unigram.vocab_size} token ids; tokens: ${Object.entries(f.unigram.tokens).map(([s, t]) => `${s} ${t}`).join(", ")}\n\n`;
  if (f.pairs.length === 0) return out + "only one split: nothing to compare\n";
  const rows: (string | number)[][] = [
    ["reference", "held-out", "documents", "exact dups", `docs sharing a ${n}-gram`, `${n}-grams seen`, "near-dup docs (pairs)", "JS divergence", "cross-entropy", "own entropy"],
  ];
  for (const p of f.pairs) {
    rows.push([
      p.reference,
      p.held_out,
      p.documents,
      p.exact_duplicates,
      `${p.ngram_documents} (${percent(p.ngram_document_fraction)})`,
      `${p.ngrams_seen} of ${p.ngrams} (${percent(p.ngram_fraction)})`,
      p.near_duplicate_documents === null ? "-" : `${p.near_duplicate_documents} (${p.near_duplicate_pairs})`,
      bits(p.jensen_shannon_bits),
      bits(p.cross_entropy_bits),
      bits(p.entropy_bits),
    ]);
  }
  out += table(rows);
  out += `  documents: of the held-out split; exact dups: held-out documents whose text equals a reference document's;\n`;
  out += `  docs sharing: held-out documents with at least one ${n}-gram also in the reference; ${n}-grams seen: held-out ${n}-gram positions also in the reference;\n`;
  out += `  JS divergence, cross-entropy and own entropy in bits (per token) over token unigrams: cross-entropy is the held-out tokens under the\n`;
  out += `  reference's add-one model, own entropy under their own distribution; the gap between them measures the shift\n`;
  const short = new Map(f.pairs.filter((p) => p.short_documents > 0).map((p) => [p.held_out, p.short_documents]));
  for (const [split, k] of short) out += `  ${split}: ${k} document${k === 1 ? " has" : "s have"} fewer than ${n} words and cannot share a ${n}-gram\n`;
  return out;
}

/** Pairs whose held-out n-gram fraction is above `rate`. */
export function overLimit(f: OverlapFigures, rate: number): PairFigures[] {
  return f.pairs.filter((p) => p.ngram_fraction > rate);
}

export const overlapCommand: CommandModule<object, Args> = {
  command: "overlap <dir>",
  describe: "overlap between splits: shared n-grams, exact and near duplicates, unigram shift (from the manifest)",
  builder: (y) =>
    y
      .positional("dir", { type: "string", demandOption: true })
      .option("ngram", { type: "number", describe: "n-gram length the figures must have been computed with (set by the pipeline's overlap: { ngram }, default 13)" })
      .option("max-ngram-overlap", { type: "number", describe: "exit 1 when any held-out split has a larger fraction of its n-grams in an earlier split (0..1)" })
      .option("json", { type: "boolean" }),
  handler: async (args) => {
    const rate = args["max-ngram-overlap"];
    if (rate !== undefined && !(rate >= 0 && rate <= 1)) throw new SiftpackError("SP_USAGE", `--max-ngram-overlap must be a fraction from 0 to 1, got ${rate}`);
    const m = await readManifest(args.dir);
    const f = m.overlap as OverlapFigures | undefined;
    if (!f || !Array.isArray(f.pairs))
      throw new SiftpackError("SP_MANIFEST", `${args.dir}: the manifest has no overlap figures (the build had no held-out split, or "overlap: false" in its pipeline file)`);
    if (args.ngram !== undefined && args.ngram !== f.ngram) {
      throw new SiftpackError(
        "SP_USAGE",
        `--ngram ${args.ngram}: this build computed the overlap with n = ${f.ngram}, at build time; figures for another n cannot be derived from the manifest: set "overlap: { ngram: ${args.ngram} }" in the pipeline file and rebuild`,
      );
    }
    process.stdout.write(args.json ? JSON.stringify(f, null, 2) + "\n" : formatOverlap(args.dir, f));
    if (rate !== undefined) {
      const bad = overLimit(f, rate);
      if (bad.length > 0) {
        throw new SiftpackError("SP_OVERLAP", `held-out n-gram overlap above --max-ngram-overlap ${rate} in ${bad.length} of ${f.pairs.length} split pairs`, {
          details: bad.map((p) => `${p.held_out} against ${p.reference}: ${p.ngrams_seen} of ${p.ngrams} ${f.ngram}-grams (${percent(p.ngram_fraction)}) are in ${p.reference}`),
        });
      }
    }
  },
};
