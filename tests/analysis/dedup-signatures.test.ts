// When the near-duplicate figure may take the MinHash dedup stage's signatures (no later stage can
// change a text), how one unit's signatures are found for the records that reach packing, and that
// a batch hashed with some signatures given is the batch of signing every text.
import { describe, expect, it } from "vitest";
import { mkdirSync, mkdtempSync, writeFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { tmpdir } from "node:os";
import { parsePipeline } from "../../src/pipeline/load.js";
import { signatureLimits, signingStage, UnitSignatures } from "../../src/analysis/dedup-signatures.js";
import { nearDupSettings } from "../../src/analysis/overlap-settings.js";
import { signerParams } from "../../src/dedup/minhash.js";
import type { MinhashOptions } from "../../src/dedup/options.js";
import { BatchSigner } from "../../src/dedup/signer.js";
import { DocHasher, TextBatch } from "../../src/analysis/overlap-hash.js";
import { loadHasher } from "../../src/lib/hash.js";
import { KeyedDirs } from "../../src/stages/keyed.js";
import type { DocRecord } from "../../src/types.js";

const pipeline = (stages: string[], extra = "") =>
  parsePipeline(`siftpack: 1\nsources: [{ name: t, files: "t.jsonl", format: jsonl }]\nstages:\n${stages.map((s) => `  - ${s}`).join("\n")}\noutput: { dir: out }\n${extra}`, "p.yaml");
const SPLIT = "split: { holdout: { val: 0.1, test: 0.1 } }";
const END = ["tokenize: { encoding: gpt2 }", "pack: { length: 64 }"];

describe("signingStage", () => {
  it("is the last MinHash dedup stage when every later stage passes texts on unchanged", () => {
    expect(signingStage(pipeline(["normalize: {}", "dedup: { method: minhash }", "filter: { min_words: 2 }", SPLIT, "tokenize: { encoding: gpt2 }", "pack: { length: 64 }"]))).toBe(1);
    expect(signingStage(pipeline(["dedup: { method: minhash }", "dedup: { method: minhash, threshold: 0.9 }", "dedup: { method: exact }", SPLIT, ...END]))).toBe(1);
  });

  it("names a stage that signs with the figure's own settings (so its signatures are the figure's)", () => {
    const config = pipeline(["dedup: { method: minhash, permutations: 64, ngram: 3, shingle: char, lowercase: false, threshold: 0.7 }", SPLIT, ...END], "seed: 41\n");
    const s = signingStage(config)!;
    expect(signerParams(config.stages[s].options as MinhashOptions, config.seed)).toEqual(nearDupSettings(config).signer);
  });

  it("is none after a stage that can change a text, without a MinHash stage, or without the figure", () => {
    for (const later of ["normalize: {}", "redact: [email]", "strip_repeated_lines: { min_docs: 2 }"])
      expect(signingStage(pipeline(["dedup: { method: minhash }", later, SPLIT, ...END])), later).toBeUndefined();
    expect(signingStage(pipeline(["dedup: { method: exact }", SPLIT, ...END]))).toBeUndefined();
    // No held-out split: no overlap figures at all.
    expect(signingStage(pipeline(["dedup: { method: minhash }", ...END]))).toBeUndefined();
    expect(signingStage(pipeline(["dedup: { method: minhash }", SPLIT, ...END], "overlap: { near_duplicates: false }\n"))).toBeUndefined();
    expect(signingStage(pipeline(["dedup: { method: minhash }", SPLIT, ...END], "overlap: false\n"))).toBeUndefined();
  });
});

describe("UnitSignatures", () => {
  const k = 4;
  const record = (seq: number, text: string): DocRecord => ({ id: `r${seq}`, source: "t", text, meta: {}, origin: { file: "t.jsonl", line: seq + 1 }, seq });
  /** A unit's files as the dedup stage writes them: rows 0, 2, 5, 9 signed, the last one from an older build (no length). */
  function unit(): KeyedDirs {
    const dirs = new KeyedDirs(mkdtempSync(join(tmpdir(), "siftpack-sigs-")), "", undefined, 1, 1);
    const texts: [number, string][] = [
      [0, "brake shoes"],
      [2, "depot gate"],
      [5, "pantograph ölü"],
      [9, "coupler"],
    ];
    const sig = new Uint32Array(texts.length * k).map((_, i) => 1000 + i);
    const docs = texts.map(([i, t], j) => JSON.stringify({ i, id: `r${i}`, s: "t", len: t.length, ...(j < 3 ? { b: Buffer.byteLength(t) } : {}), short: 0 }) + "\n").join("");
    for (const [name, data] of [
      ["sig.bin", Buffer.from(sig.buffer)],
      ["docs.jsonl", docs],
    ] as const) {
      mkdirSync(dirname(dirs.path(name, 0)), { recursive: true });
      writeFileSync(dirs.path(name, 0), data);
    }
    return dirs;
  }

  for (const windowDocs of [8192, 1])
    it(`finds a record's row in order, skipping rows that did not reach packing (${windowDocs} signatures read at a time)`, async () => {
      signatureLimits.windowDocs = windowDocs;
      try {
        const s = (await UnitSignatures.open(unit(), 0, k))!;
        expect([...(await s.find(record(2, "depot gate")))!]).toEqual([1004, 1005, 1006, 1007]);
        // By its UTF-8 length (ö and ü are two bytes each), given as bytes the way the pack phase reads them.
        const r = record(5, "");
        r.utf8 = Buffer.from("pantograph ölü");
        expect([...(await s.find(r))!]).toEqual([1008, 1009, 1010, 1011]);
        await s.close();
      } finally {
        signatureLimits.windowDocs = 8192;
      }
    });

  it("gives nothing for a row it lacks, a text of another length, or a row written without a length", async () => {
    const s = (await UnitSignatures.open(unit(), 0, k))!;
    expect(await s.find(record(1, "no such row"))).toBeUndefined();
    expect(await s.find(record(2, "depot gates"))).toBeUndefined();
    expect(await s.find(record(9, "coupler"))).toBeUndefined();
    await s.close();
  });

  it("is absent when the unit has no files, or they do not agree", async () => {
    const dirs = unit();
    expect(await UnitSignatures.open(dirs, 0, k + 1)).toBeUndefined();
    expect(await UnitSignatures.open(new KeyedDirs(mkdtempSync(join(tmpdir(), "siftpack-sigs-")), "", undefined, 1, 1), 0, k)).toBeUndefined();
  });
});

describe("hashing a batch with signatures given", () => {
  it("gives the batch of signing every text: the given rows' band keys are made from them", async () => {
    await loadHasher();
    const signer = { shingle: { kind: "word" as const, ngram: 2, lowercase: true }, permutations: 16, bands: 4, rows: 4, seed: 7 };
    const texts = ["tram 7 brake shoes replaced at the depot", "door", "pantograph checked, no wear", "points heater on route 7 loose", ""];
    const signatures = new BatchSigner(signer).sign(texts).signatures;
    const hasher = new DocHasher({ ngram: 3, form: "NFKC", signer });
    const plain = new TextBatch();
    const given = new TextBatch();
    for (const [i, t] of texts.entries()) {
      plain.add(t, i % 2 === 0);
      // Every other text with its signature.
      given.add(t, i % 2 === 0, i % 2 === 1 ? signatures.subarray(i * 16, (i + 1) * 16) : undefined);
    }
    const a = hasher.hash(plain.take(2));
    const req = given.take(2);
    expect([...req.given!.has]).toEqual([0, 1, 0, 1, 0]);
    const b = hasher.hash(req);
    expect([...b.signatures!]).toEqual([...a.signatures!]);
    expect([...b.bandKeys!]).toEqual([...a.bandKeys!]);
    expect([...b.trainKeys]).toEqual([...a.trainKeys]);
  });
});
