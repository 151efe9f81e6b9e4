// Protected evaluation texts as a set of word n-gram hashes, each remembering the first file it came from.
import { createReadStream } from "node:fs";
import { lstat } from "node:fs/promises";
import path from "node:path";
import { createInterface } from "node:readline";
import { createGunzip } from "node:zlib";
import { glob, isDynamicPattern } from "tinyglobby";
import { SiftpackError, describeSystemError } from "../errors.js";
import { hashFile } from "../lib/hash.js";
import { HashMap64 } from "./hash-map64.js";
import { NgramHasher } from "./ngram-hash.js";
import { wordsOf, type WordForm } from "./words.js";

export interface ProtectedFile {
  /** Path relative to the pipeline file's directory, with forward slashes. */
  path: string;
  size: number;
  xxh64: string;
  passages: number;
  /** Passages with fewer words than one n-gram: they cannot be matched and are reported. */
  short_passages: number;
  /** N-gram positions in the file (repeats included). */
  ngrams: number;
}

export interface ProtectedSet {
  /** N-gram hash → index into `files` of the first file holding it. */
  grams: HashMap64;
  files: ProtectedFile[];
}

const byteOrder = (a: string, b: string) => (Buffer.compare(Buffer.from(a), Buffer.from(b)) as number);

/** The files the patterns name (globs or plain paths, relative to baseDir), deduplicated, each pattern's matches in byte order. */
export async function resolveProtected(patterns: string[], baseDir: string, who: string): Promise<string[]> {
  const out: string[] = [];
  for (const pattern of patterns) {
    let abs: string[];
    if (isDynamicPattern(pattern)) abs = await glob(pattern, { cwd: baseDir, absolute: true, expandDirectories: false, onlyFiles: true });
    else {
      const p = path.resolve(baseDir, pattern);
      abs = (await lstat(p).then(() => true, () => false)) ? [p] : [];
    }
    if (abs.length === 0) throw new SiftpackError("SP_INPUT_MISSING", `${who}: no file matches "${pattern}" (relative to ${baseDir})`);
    for (const rel of abs.map((f) => path.relative(baseDir, f).split(path.sep).join("/")).sort(byteOrder)) if (!out.includes(rel)) out.push(rel);
  }
  return out;
}

/** Calls `each(passage)` for every passage of a text file: runs of lines separated by blank lines (.gz is decompressed). */
async function eachPassage(file: string, each: (text: string) => void): Promise<void> {
  const raw = createReadStream(file);
  const stream = file.endsWith(".gz") ? raw.pipe(createGunzip()) : raw;
  raw.on("error", (e) => stream.destroy(e));
  // Invalid UTF-8 becomes U+FFFD, which is not a letter or digit: it splits a word but cannot match anything.
  const lines = createInterface({ input: stream.setEncoding("utf8"), crlfDelay: Infinity });
  let passage: string[] = [];
  for await (const line of lines) {
    if (line.trim() === "") {
      if (passage.length) each(passage.join("\n"));
      passage = [];
    } else passage.push(line);
  }
  if (passage.length) each(passage.join("\n"));
}

/**
 * Reads the protected files into one hash set. Memory: 13 bytes a slot at a load factor of 0.35 to
 * 0.7, so 19–37 bytes per distinct n-gram (10 million n-grams, roughly 10 million words of
 * protected text, take 190–370 MB). A 64-bit n-gram hash stands for the n-gram: a training n-gram is
 * wrongly taken for a protected one with probability about N / 2^64 per lookup (N distinct protected
 * n-grams), 5·10⁻¹³ at N = 10⁷.
 */
export async function loadProtected(patterns: string[], baseDir: string, ngram: number, form: WordForm, who: string): Promise<ProtectedSet> {
  const grams = new HashMap64(1 << 12);
  const hasher = new NgramHasher(ngram);
  const files: ProtectedFile[] = [];
  for (const rel of await resolveProtected(patterns, baseDir, who)) {
    const abs = path.resolve(baseDir, rel);
    const index = files.length;
    const f: ProtectedFile = { path: rel, size: 0, xxh64: "", passages: 0, short_passages: 0, ngrams: 0 };
    try {
      Object.assign(f, await hashFile(abs));
      await eachPassage(abs, (text) => {
        f.passages++;
        const count = hasher.hash(wordsOf(text, form));
        if (count === 0) f.short_passages++;
        f.ngrams += count;
        for (let i = 0; i < count; i++) grams.setIfAbsent(hasher.hi[i], hasher.lo[i], index);
      });
    } catch (err) {
      if (err instanceof SiftpackError) throw err;
      throw new SiftpackError("SP_INPUT_MISSING", `${who}: cannot read protected file ${rel}: ${describeSystemError(err)}`, { cause: err });
    }
    files.push(f);
  }
  return { grams, files };
}
