// Ids equal the reference's on real text: every paragraph of the system's license texts and a sample of package copyright files.
//
// Reference: tiktoken npm package, WASM build of OpenAI's tiktoken (encode_ordinary).

import { readFileSync, readdirSync, statSync } from "node:fs";
import { join } from "node:path";
import { get_encoding, type TiktokenEncoding } from "tiktoken";
import { afterAll, describe, expect, it } from "vitest";
import { ENCODINGS, loadEncoding } from "../../src/tokenizer/index.js";

const LICENSES = "/usr/share/common-licenses";
const DOCS = "/usr/share/doc";
const COPYRIGHT_SAMPLE = 60;
// A few copyright files are megabytes of concatenated licenses; they add time, not coverage.
const MAX_FILE_BYTES = 64 * 1024;

function licenseFiles(): string[] {
  return readdirSync(LICENSES)
    .sort()
    .map((f) => join(LICENSES, f))
    .filter((p) => statSync(p).isFile());
}

/** Every k-th copyright file (up to 64 KiB) in name order: deterministic, spread over the alphabet. */
function copyrightSample(): string[] {
  const all = readdirSync(DOCS)
    .sort()
    .map((d) => join(DOCS, d, "copyright"))
    .filter((p) => {
      try {
        const st = statSync(p);
        return st.isFile() && st.size <= MAX_FILE_BYTES;
      } catch {
        return false;
      }
    });
  const step = Math.max(1, Math.floor(all.length / COPYRIGHT_SAMPLE));
  return all.filter((_, i) => i % step === 0);
}

function paragraphs(text: string): string[] {
  return text.split(/\n[ \t]*\n/).filter((p) => p.length > 0);
}

const files = [...licenseFiles(), ...copyrightSample()];
const texts = files.map((f) => readFileSync(f, "utf8"));
const paras = texts.flatMap(paragraphs);

const refs = new Map<string, ReturnType<typeof get_encoding>>();
function reference(name: string): ReturnType<typeof get_encoding> {
  let r = refs.get(name);
  if (r === undefined) {
    r = get_encoding(name as TiktokenEncoding);
    refs.set(name, r);
  }
  return r;
}
afterAll(() => {
  for (const r of refs.values()) r.free();
});

describe("the corpus is there", () => {
  it("has license files, copyright files and a few hundred paragraphs", () => {
    expect(licenseFiles().length).toBeGreaterThan(5);
    expect(copyrightSample().length).toBeGreaterThan(20);
    expect(paras.length).toBeGreaterThan(300);
  });
});

describe.each([...ENCODINGS])("%s equals the reference", (name) => {
  it("on every paragraph", () => {
    const enc = loadEncoding(name);
    const ref = reference(name);
    let checked = 0;
    for (const p of paras) {
      const ours = enc.encode(p);
      const theirs = Array.from(ref.encode_ordinary(p));
      if (ours.length !== theirs.length || ours.some((id, i) => id !== theirs[i])) {
        expect(ours, `paragraph ${JSON.stringify(p.slice(0, 80))}`).toEqual(theirs);
      }
      checked++;
    }
    expect(checked).toBe(paras.length);
  });

  it("on whole files, also through the regex pre-tokenizer", () => {
    const enc = loadEncoding(name);
    const viaRegex = loadEncoding(name, { pretokenizer: "regex" });
    const ref = reference(name);
    for (let i = 0; i < texts.length; i++) {
      const theirs = Array.from(ref.encode_ordinary(texts[i]));
      expect(enc.encode(texts[i]), files[i]).toEqual(theirs);
      expect(viaRegex.encode(texts[i]), files[i]).toEqual(theirs);
      expect(enc.decode(theirs)).toBe(texts[i]);
    }
  });
});
