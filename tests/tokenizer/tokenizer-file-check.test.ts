// Tokenizer files are input: each bad entry is one SP_TOKENIZER error naming the file and the entry,
// never a wrong id, a hang or a stack trace; files this project's trainer writes keep loading.
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { SiftpackError } from "../../src/errors.js";
import { BYTE_TO_CHAR, loadTokenizerFile, PretokenCounter, tokenizerJson, trainBpe } from "../../src/tokenizer/index.js";
import { duplicateKey } from "../../src/tokenizer/tokenizer-check.js";

const CORPUS = [
  "Door sensor on car 12 replaced at Quayside depot. Door sensor on car 14 replaced at Northfold depot.",
  "Pantograph carbon strips checked on tram 7; wheel flats found on bogie 2, sent to the lathe.",
  "Shift note: the 05:40 run left Quayside late, point heater at Elm Junction faulty again.",
];
const SAMPLE = "Door sensor on car 13 replaced. Überprüfung der Weiche — 東京 😀\n\n\tpantograph  x";

/** A tokenizer file written by the project's trainer (special tokens first, then bytes, then merges). */
function trainedText(vocabSize = 400, specialTokens = ["<|endoftext|>", "<|pad|>"]): string {
  const c = new PretokenCounter();
  for (const t of CORPUS) c.add(t);
  return tokenizerJson(trainBpe(c.counts, { vocabSize, minFrequency: 1, specialTokens }));
}

const dir = mkdtempSync(join(tmpdir(), "sp-tokcheck-"));
let serial = 0;
/** Writes `content` under a fresh name (the loader caches by path, size and mtime) and loads it as "tok/tokenizer.json". */
function load(content: string | Buffer) {
  const path = join(dir, `t${serial++}.json`);
  writeFileSync(path, content);
  return loadTokenizerFile(path, {}, "tok/tokenizer.json");
}

/** The message of the SiftpackError that loading `content` throws. */
function refusal(content: string | Buffer): string {
  try {
    load(content);
  } catch (err) {
    expect(err).toBeInstanceOf(SiftpackError);
    expect((err as SiftpackError).code).toBe("SP_TOKENIZER");
    return (err as Error).message;
  }
  throw new Error("loaded");
}

const BASE = trainedText();
const edit = (mutate: (j: any) => void): string => {
  const j = JSON.parse(BASE);
  mutate(j);
  return JSON.stringify(j, null, 2);
};
/** A vocab entry of the base file that is neither a byte nor the result of a merge used by others (the last one trained). */
/** Distinct ids of the base file: the trainer gives every id in [0, COUNT) (its special tokens are vocab entries too). */
const COUNT = Object.keys(JSON.parse(BASE).model.vocab).length;
const LAST = Object.entries(JSON.parse(BASE).model.vocab as Record<string, number>).sort((a, b) => b[1] - a[1])[0][0];

describe("tokenizer file checks: one clear error per problem", () => {
  it("ids: whole numbers, 0 to 2^32 - 1, vocab entries below 2^21, dense enough", () => {
    const id = (v: unknown) => refusal(edit((j) => (j.model.vocab[LAST] = v)));
    expect(id(2 ** 40)).toBe(`tokenizer file tok/tokenizer.json: vocab entry ${JSON.stringify(LAST)} has id 1099511627776, above the largest id 4294967295`);
    expect(id(4_000_000_000)).toBe(
      `tokenizer file tok/tokenizer.json: vocab entry ${JSON.stringify(LAST)} has id 4000000000, above 2097151, the largest id of a vocab entry siftpack's encoder supports`,
    );
    expect(id(-3)).toBe(`tokenizer file tok/tokenizer.json: vocab entry ${JSON.stringify(LAST)} has id -3; ids start at 0`);
    expect(id(3.5)).toBe(`tokenizer file tok/tokenizer.json: vocab entry ${JSON.stringify(LAST)} has id 3.5; ids are whole numbers`);
    expect(id("7")).toBe(`tokenizer file tok/tokenizer.json: vocab entry ${JSON.stringify(LAST)} has id "7"; ids are whole numbers`);
    expect(id(100_000)).toMatch(/vocab entry .* has id 100000, but the file has only \d+ ids: ids of 65536 and above must stay below twice the number of ids \(\d+\)$/);
    // "<|pad|>" keeps its vocab entry at id 1, so the file has one id more than vocab entries.
    const added = (v: unknown) => refusal(edit((j) => (j.added_tokens[1].id = v)));
    expect(added(4_000_000_000)).toBe(
      `tokenizer file tok/tokenizer.json: added token "<|pad|>" has id 4000000000, but the file has only ${COUNT + 1} ids: ids of 65536 and above must stay below twice the number of ids (${2 * (COUNT + 1)})`,
    );
    expect(added(2 ** 32)).toBe('tokenizer file tok/tokenizer.json: added token "<|pad|>" has id 4294967296, above the largest id 4294967295');
    expect(refusal(edit((j) => delete j.added_tokens[1].id))).toBe('tokenizer file tok/tokenizer.json: added token "<|pad|>" has no id');
  });

  it("duplicates: ids, vocab entries, added tokens, clashes between the two", () => {
    const vocab = JSON.parse(BASE).model.vocab as Record<string, number>;
    expect(refusal(edit((j) => (j.model.vocab[LAST] = vocab["e"])))).toBe(`tokenizer file tok/tokenizer.json: vocab entries "e" and ${JSON.stringify(LAST)} both have id ${vocab["e"]}`);
    // JSON.parse would keep the second silently; the text is scanned for it.
    const twice = BASE.replace('"vocab": {', `"vocab": {\n      "e": 399,`);
    expect(refusal(twice)).toBe('tokenizer file tok/tokenizer.json: vocab entry "e" is listed twice');
    expect(refusal(BASE.replace('"version": "1.0",', '"version": "1.0", "version": "2.0",'))).toBe('tokenizer file tok/tokenizer.json: key "version" appears twice in (top level)');
    expect(refusal(edit((j) => j.added_tokens.push({ id: 1, content: "<|endoftext|>" })))).toBe('tokenizer file tok/tokenizer.json: added token "<|endoftext|>" is listed twice');
    expect(refusal(edit((j) => (j.added_tokens[1].id = 0)))).toBe('tokenizer file tok/tokenizer.json: added tokens "<|endoftext|>" and "<|pad|>" both have id 0');
    expect(refusal(edit((j) => (j.added_tokens[1].id = vocab["e"])))).toBe(`tokenizer file tok/tokenizer.json: added token "<|pad|>" has id ${vocab["e"]}, which is vocab entry "e"`);
  });

  it("merges name known tokens; every byte has a token", () => {
    expect(refusal(edit((j) => (j.model.merges[0] = ["Ġqqq", "zz"])))).toBe('tokenizer file tok/tokenizer.json: merge 0 ["Ġqqq","zz"] uses a token missing from the vocab: "Ġqqq"');
    expect(refusal(edit((j) => (j.model.merges[0] = ["e", "Ġ"])))).toBe('tokenizer file tok/tokenizer.json: merge 0 ["e","Ġ"] uses a token missing from the vocab: its result "eĠ"');
    expect(refusal(edit((j) => (j.model.merges[0] = "a b c")))).toBe('tokenizer file tok/tokenizer.json: merge 0 is not "a b" or [a, b]: "a b c"');
    expect(refusal(edit((j) => ((j.model.vocab["Ċ"] = undefined), (j.model.merges = []))))).toBe(
      "tokenizer file tok/tokenizer.json: no vocab entry for byte 0x0a: a byte-level vocab has a token for each of the 256 bytes",
    );
  });

  it("model kind, pre-tokenizer, JSON and the file itself", () => {
    expect(refusal(edit((j) => (j.model.type = "WordPiece")))).toBe('tokenizer file tok/tokenizer.json: unsupported model type "WordPiece"; only byte-level "BPE" is supported');
    expect(refusal(edit((j) => (j.pre_tokenizer = { type: "BertPreTokenizer" })))).toBe(
      'tokenizer file tok/tokenizer.json: unsupported pre_tokenizer of type "BertPreTokenizer"; expected ByteLevel or Split',
    );
    const split = (regex: string) => edit((j) => (j.pre_tokenizer = { type: "Sequence", pretokenizers: [{ type: "Split", pattern: { Regex: regex }, behavior: "Isolated" }, { type: "ByteLevel", use_regex: false }] }));
    expect(refusal(split("(a"))).toBe('tokenizer file tok/tokenizer.json: pre_tokenizer Split pattern "(a": not a valid regular expression: Unterminated group');
    expect(refusal(split("\\p{Zzz}"))).toMatch(/^tokenizer file tok\/tokenizer.json: pre_tokenizer Split pattern "\\\\p\{Zzz\}": cannot translate the pre-tokenizer pattern: /);
    // V8 quotes the text around the fault (newlines and all) or gives a position: one line either way.
    expect(refusal(BASE.slice(0, 200))).toMatch(/^tokenizer file tok\/tokenizer.json: not JSON: [^\n]*$/);
    expect(refusal('{\n  "model": x\n}')).toBe("tokenizer file tok/tokenizer.json: not JSON: Unexpected token 'x'");
    expect(refusal('{\n  "model": 1,,\n}')).toBe("tokenizer file tok/tokenizer.json: not JSON: Expected double-quoted property name at line 2, column 14");
    expect(() => loadTokenizerFile(join(dir, "none.json"), {}, "tok/none.json")).toThrow("tokenizer file tok/none.json: no such file or directory");
  });

  it("keeps loading what the trainer writes, published layouts and small sparse files", () => {
    for (const [size, specials] of [
      [300, ["<|endoftext|>"]],
      [2000, ["<|endoftext|>", "<|pad|>", "<|sep|>"]],
      [400, ["<|endoftext|>", "e", "Ġdepot"]], // specials spelled like ordinary tokens: the vocab keeps the ordinary id
    ] as const) {
      const enc = load(trainedText(size, [...specials]));
      expect(enc.decode(enc.encode(SAMPLE))).toBe(SAMPLE);
      expect(enc.eosId).toBe(0);
    }
    // Published layout: ids [0, n) in the vocab, added tokens after it (not in the vocab).
    const published = edit((j) => {
      const vocab = j.model.vocab as Record<string, number>;
      delete vocab["<|endoftext|>"];
      delete vocab["<|pad|>"];
      for (const k of Object.keys(vocab)) vocab[k] -= 2;
      j.added_tokens = [{ id: 398, content: "<|endoftext|>" }, { id: 399, content: "<|pad|>" }];
    });
    expect(load(published).eosId).toBe(398);
    // Ids need not be dense below 65536 (bytes at 100..355, the end-of-text token at 60000).
    const vocab: Record<string, number> = {};
    BYTE_TO_CHAR.forEach((c, b) => (vocab[c] = 100 + b));
    const sparse = { added_tokens: [{ id: 60000, content: "<|endoftext|>" }], pre_tokenizer: { type: "ByteLevel" }, model: { type: "BPE", vocab, merges: [] } };
    const enc = load(JSON.stringify(sparse));
    expect(enc.vocabSize).toBe(60001);
    expect(enc.decode(enc.encode(SAMPLE))).toBe(SAMPLE);
  });

  it("finds a key given twice at any depth, escapes compared by value, without recursion", () => {
    expect(duplicateKey('{"a": {"b": 1, "c": [1, {"d": 1, "d": 2}]}}')).toEqual({ key: "d", at: "a.c[1]" });
    expect(duplicateKey('{"model": {"vocab": {"\\u0041": 1, "A": 2}}}')).toEqual({ key: "A", at: "model.vocab" });
    expect(duplicateKey('{"a": "{\\"a\\": 1, \\"a\\": 2}", "b": ["a", "a"]}')).toBeUndefined();
    const deep = "[".repeat(200_000) + "]".repeat(200_000);
    expect(duplicateKey(deep)).toBeUndefined();
    // Any JSON.stringify output has unique keys; a key added again to an object is found there.
    fc.assert(
      fc.property(fc.jsonValue(), fc.string(), fc.nat(4), (v, k, indent) => {
        expect(duplicateKey(JSON.stringify(v, null, indent))).toBeUndefined();
        const text = JSON.stringify({ outer: { [k]: v, inner: [v] } }, null, indent);
        const again = text.replace(/^\{\s*"outer":\s*\{/, (m) => `${m}${JSON.stringify(k)}: 0,`);
        expect(duplicateKey(again)).toEqual({ key: k, at: "outer" });
      }),
    );
  });
});

/** A mutation of the base file's text (or bytes), with a name for the failure report. */
type Mutation = { name: string; content: string | Buffer };

const vocabKeys = Object.keys(JSON.parse(BASE).model.vocab);
const mergeCount = JSON.parse(BASE).model.merges.length as number;
const oddIds = fc.constantFrom<unknown>(2 ** 21, 2 ** 32, 2 ** 40, 4e9, 2 ** 53, 1e300, 65536, 70000, -1, -0, 0.5, 1e-7, null, "3", true, [1], {});
const key = fc.constantFrom(...vocabKeys);

const mutations: fc.Arbitrary<Mutation> = fc.oneof(
  fc.tuple(key, oddIds).map(([k, v]) => ({ name: `vocab ${k} = ${JSON.stringify(v)}`, content: edit((j) => (j.model.vocab[k] = v)) })),
  fc.tuple(fc.nat(1), oddIds).map(([k, v]) => ({ name: `added ${k} id = ${JSON.stringify(v)}`, content: edit((j) => (j.added_tokens[k].id = v)) })),
  fc.tuple(key, key).map(([a, b]) => ({ name: `vocab ${a} takes the id of ${b}`, content: edit((j) => (j.model.vocab[a] = j.model.vocab[b])) })),
  fc.tuple(key, fc.nat(400)).map(([k, id]) => ({ name: `vocab ${k} listed again as ${id}`, content: BASE.replace('"vocab": {', `"vocab": {"${k.replace(/["\\]/g, "\\$&")}": ${id},`) })),
  fc.tuple(fc.nat(mergeCount - 1), fc.nat(1), fc.string({ maxLength: 4 })).map(([m, side, s]) => ({
    name: `merge ${m} side ${side} = ${JSON.stringify(s)}`,
    content: edit((j) => (j.model.merges[m][side] = s)),
  })),
  fc.constantFrom<unknown>("WordPiece", "Unigram", "WordLevel", "bpe", 42, null).map((t) => ({ name: `model.type ${JSON.stringify(t)}`, content: edit((j) => (j.model.type = t)) })),
  fc.nat(BASE.length - 1).map((n) => ({ name: `cut at ${n}`, content: BASE.slice(0, n) })),
  fc.array(fc.tuple(fc.nat(BASE.length - 1), fc.nat(255)), { minLength: 1, maxLength: 8 }).map((flips) => {
    const b = Buffer.from(BASE);
    for (const [at, v] of flips) b[at] = v;
    return { name: `bytes ${JSON.stringify(flips)}`, content: b };
  }),
);

describe("mutated tokenizer files", () => {
  it("give a clean one-line SP_TOKENIZER error or a correct tokenizer, each within a second", () => {
    const started = Date.now();
    let refused = 0;
    fc.assert(
      fc.property(mutations, (m) => {
        const t0 = performance.now();
        try {
          const enc = load(m.content);
          // A correct load: byte-level, so every text round-trips; ids are below the vocabulary size.
          const ids = enc.encode(SAMPLE);
          expect(enc.decode(ids)).toBe(SAMPLE);
          for (const id of [...ids, enc.eosId]) expect(id).toBeLessThan(enc.vocabSize);
          expect(enc.vocabSize).toBeLessThanOrEqual(65536);
        } catch (err) {
          if (!(err instanceof SiftpackError)) throw new Error(`${m.name}: not a SiftpackError: ${(err as Error).stack}`);
          expect(err.code).toBe("SP_TOKENIZER");
          expect(err.message).toMatch(/^tokenizer file tok\/tokenizer\.json: [^\n]+$/);
          refused++;
        }
        expect(performance.now() - t0, m.name).toBeLessThan(1000);
      }),
      { numRuns: 300 },
    );
    expect(refused).toBeGreaterThan(100);
    expect(Date.now() - started).toBeLessThan(10_000);
  });

  it("loads a large trained file within a second", () => {
    const text = trainedText(3000);
    const t0 = performance.now();
    load(text);
    expect(performance.now() - t0).toBeLessThan(1000);
  });
});
