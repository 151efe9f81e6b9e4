// A small invented manifest (a tram depot's tickets and manuals) for the report's unit tests.
import type { Manifest } from "../../src/output/manifest.js";

const hist = (docs: number[]) => docs.map((documents, k) => ({ min: 2 ** (k + 3), max: 2 ** (k + 4) - 1, documents }));

export function manifestFixture(stages: { name: string; options: Record<string, unknown> }[] = defaultStages()): Manifest {
  return {
    format: "siftpack/1",
    tool: { name: "siftpack", version: "0.1.0", dependencies: {} },
    pipeline: { file: "depot.yaml", hash: "00aa11bb22cc33dd", resolved: { siftpack: 1, seed: 3, sources: [{ name: "tickets", files: "t/*.jsonl", format: "jsonl", text: "body", meta: [], weight: 1 }], stages } },
    seed: 3,
    inputs: [{ source: "tickets", path: "t/a.jsonl", size: 1234, xxh64: "0123456789abcdef" }],
    tokenizer: { name: "gpt2", vocab_size: 50257, special_ids: { "<|endoftext|>": 50256 }, eos_id: 50256, pad_id: 50256, bos: false, eos: true },
    length: 64,
    strategy: "best-fit",
    dtype: "uint16",
    segments_dtype: "uint16",
    splits: {
      train: { documents: 40, blocks: 10, tokens: 600, target_tokens: 560, padding_tokens: 40, padding_fraction: 0.0625, cut_documents: 2, targets_lost_to_cuts: 2, continuation_tokens: 50, length_histogram: hist([5, 30, 5]), shards: [{ tokens: "train/000000.tokens.npy", segments: "train/000000.segments.npy", blocks: 10 }] },
      val: { documents: 5, blocks: 2, tokens: 100, target_tokens: 95, padding_tokens: 28, padding_fraction: 0.21875, cut_documents: 0, targets_lost_to_cuts: 0, continuation_tokens: 0, length_histogram: hist([1, 4]), shards: [{ tokens: "val/000000.tokens.npy", segments: "val/000000.segments.npy", blocks: 2 }] },
    } as unknown as Manifest["splits"],
    records: {
      read: 60,
      kept: 45,
      dropped: 13,
      quarantined: 2,
      by_reason: { quarantined: 2, duplicate: 4, "near-duplicate": 3, "filter:min_words": 5, "attachment-only": 1 },
      by_source: { tickets: { read: 60, kept: 45, dropped: 13, quarantined: 2, tokens: 700 } },
      by_split: { val: 5, train: 40 },
    },
    stage_counts: { "split:train": 40 },
    files: [{ path: "ledger.jsonl.gz", size: 10, xxh64: "ffffffffffffffff" }],
    build_hash: "abcdefabcdefabcd",
  } as Manifest;
}

export function defaultStages() {
  return [
    { name: "normalize", options: { form: "NFKC" } },
    { name: "filter", options: { min_words: 3 } },
    { name: "dedup", options: { method: "minhash", threshold: 0.8, keep: "first", action: "drop" } },
    { name: "dedup", options: { method: "exact" } },
    { name: "split", options: {} },
    { name: "tokenize", options: { encoding: "gpt2" } },
    { name: "pack", options: { length: 64 } },
  ];
}
