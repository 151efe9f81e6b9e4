// Recognises an input file's format and compression from its name and its first bytes, as the readers will need them.
import { open } from "node:fs/promises";
import { basename } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import { compressionOf, openInput, type Compression } from "../sources/open.js";
import type { Format } from "../sources/formats.js";

export interface Sniffed {
  format: Format;
  compression: Compression;
  /** The name's extensions that tell format and compression (".jsonl.gz"); "" when none does. */
  suffix: string;
  /** How the format was decided, for the summary. */
  by: "name" | "content";
}

/** Magic numbers of compressed data (RFC 1952; RFC 8878; the xz and bzip2 file formats). */
const MAGIC: { name: string; bytes: number[] }[] = [
  { name: "gzip", bytes: [0x1f, 0x8b] },
  { name: "zstd", bytes: [0x28, 0xb5, 0x2f, 0xfd] },
  { name: "xz", bytes: [0xfd, 0x37, 0x7a, 0x58, 0x5a, 0x00] },
  { name: "bzip2", bytes: [0x42, 0x5a, 0x68] },
];

const BY_EXTENSION: Record<string, Format> = {
  ".jsonl": "jsonl",
  ".ndjson": "jsonl",
  ".jsonlines": "jsonl",
  ".json": "json",
  ".csv": "csv",
  ".tsv": "tsv",
  ".tab": "tsv",
  ".txt": "text",
  ".text": "text",
  ".md": "text",
  ".parquet": "parquet",
};

async function head(file: string, n: number): Promise<Buffer> {
  let fh;
  try {
    fh = await open(file, "r");
  } catch (err) {
    throw new SiftpackError("SP_INPUT_MISSING", `cannot open "${file}": ${describeSystemError(err)}`, { cause: err });
  }
  try {
    const buf = Buffer.alloc(n);
    const { bytesRead } = await fh.read(buf, 0, n, 0);
    return buf.subarray(0, bytesRead);
  } finally {
    await fh.close();
  }
}

/** The first `n` bytes after decompression (fewer at the end of the file). */
async function decodedHead(file: string, n: number): Promise<string> {
  const input = await openInput(file);
  const parts: Buffer[] = [];
  let size = 0;
  try {
    for await (const chunk of input) {
      parts.push(chunk as Buffer);
      size += (chunk as Buffer).length;
      if (size >= n) break;
    }
  } finally {
    input.destroy();
  }
  return Buffer.concat(parts).subarray(0, n).toString("utf8");
}

/** JSON Lines if the first non-blank line is a whole JSON object by itself. */
function looksLikeJsonLines(text: string): boolean {
  const first = text.split("\n").find((l) => l.trim() !== "");
  if (!first) return false;
  try {
    const v = JSON.parse(first);
    return v !== null && typeof v === "object" && !Array.isArray(v);
  } catch {
    return false;
  }
}

/** A delimiter that splits the first two lines into the same number (≥ 2) of fields. */
function delimiterOf(text: string): "," | "\t" | undefined {
  const lines = text.split("\n").filter((l) => l.trim() !== "").slice(0, 2);
  if (lines.length < 2) return undefined;
  for (const d of ["\t", ","] as const) {
    const counts = lines.map((l) => l.split(d).length);
    if (counts[0] >= 2 && counts[0] === counts[1]) return d;
  }
  return undefined;
}

export async function sniff(file: string): Promise<Sniffed> {
  const name = basename(file).toLowerCase();
  // Refuses .xz and .bz2 by name with the readers' own message.
  const compression = compressionOf(file);
  const bytes = await head(file, 8);
  const magic = MAGIC.find((m) => m.bytes.every((b, i) => bytes[i] === b))?.name;
  const named = compression === "none" ? undefined : compression;
  // The readers choose the decompressor from the name, so name and content must agree.
  if (magic !== named && (magic !== undefined || named !== undefined)) {
    if (magic === undefined) throw new SiftpackError("SP_INPUT_FORMAT", `${file}: the name ends in .${named === "gzip" ? "gz" : "zst"} but the file is not ${named} data`);
    const ext = magic === "gzip" ? ".gz" : magic === "zstd" ? ".zst" : undefined;
    throw new SiftpackError(
      "SP_INPUT_FORMAT",
      ext
        ? `${file}: the content is ${magic}-compressed but the name does not say so; siftpack picks the decompressor from the name: rename it to end in ${ext}`
        : `${file}: the content is ${magic}-compressed, which siftpack does not read; recompress it with gzip or zstd`,
    );
  }
  const bare = compression === "none" ? name : name.replace(/\.(gz|zst)$/, "");
  const dot = bare.lastIndexOf(".");
  const ext = dot > 0 ? bare.slice(dot) : "";
  const cext = compression === "gzip" ? ".gz" : compression === "zstd" ? ".zst" : "";
  const parquetMagic = bytes.subarray(0, 4).toString("latin1") === "PAR1";
  if (ext === ".parquet" || parquetMagic) {
    if (compression !== "none") throw new SiftpackError("SP_INPUT_FORMAT", `${file}: a compressed Parquet file is not read; Parquet compresses its own pages, so store it uncompressed`);
    return { format: "parquet", compression, suffix: ext === ".parquet" ? ".parquet" : "", by: ext === ".parquet" ? "name" : "content" };
  }
  const known = BY_EXTENSION[ext];
  const text = known === "json" || !known ? await decodedHead(file, 64 * 1024) : "";
  if (known === "json") {
    // A ".json" file holding one object per line is JSON Lines to the readers.
    const first = text.trimStart()[0];
    if (first === "{" && looksLikeJsonLines(text)) return { format: "jsonl", compression, suffix: ext + cext, by: "content" };
    if (first !== "[") throw new SiftpackError("SP_INPUT_FORMAT", `${file}: a .json input must hold an array of records or one object per line`);
    return { format: "json", compression, suffix: ext + cext, by: "name" };
  }
  if (known) return { format: known, compression, suffix: ext + cext, by: "name" };
  const suffix = ext + cext;
  const trimmed = text.trimStart();
  if (trimmed.startsWith("{") && looksLikeJsonLines(text)) return { format: "jsonl", compression, suffix, by: "content" };
  if (trimmed.startsWith("[")) return { format: "json", compression, suffix, by: "content" };
  const d = delimiterOf(text);
  if (d) return { format: d === "," ? "csv" : "tsv", compression, suffix, by: "content" };
  return { format: "text", compression, suffix, by: "content" };
}
