// The tokenizer a build used, loaded again from what the build left: a named encoding, the trained
// tokenizer.json in the build, or the tokenizer file its pipeline named (for `inspect` and `encode --build`).
import { existsSync } from "node:fs";
import { join, resolve } from "node:path";
import { SiftpackError } from "../errors.js";
import { ENCODINGS, loadEncoding, loadTokenizerFile, TRAINED_FILE, type Encoder } from "../tokenizer/index.js";
import { readBuildInfo } from "../output/build-info.js";
import type { Manifest } from "../output/manifest.js";

const DEFAULT_EOS = "<|endoftext|>";

/** The options of the pipeline's tokenize stage, from the manifest's resolved pipeline. */
function tokenizeOptions(m: Manifest): { tokenizer?: string; eos_token?: string } {
  const stages = (m.pipeline?.resolved as { stages?: { name: string; options?: Record<string, unknown> }[] } | undefined)?.stages ?? [];
  const t = stages.find((s) => s.name === "tokenize")?.options ?? {};
  return { tokenizer: typeof t.tokenizer === "string" ? t.tokenizer : undefined, eos_token: typeof t.eos_token === "string" ? t.eos_token : undefined };
}

/** The content digest in a file tokenizer's name ("tokenizer.json@1a2b…", "trained@1a2b…"). */
const digestOf = (name: string) => name.slice(name.lastIndexOf("@") + 1);

/**
 * The encoder of the build in `dir`. A named encoding is built in; a trained tokenizer is the
 * build's own tokenizer.json; a tokenizer file is found again through the pipeline file's folder
 * (build-info.json) unless `tokenizerFile` names it. A file is used only if its content digest is the
 * one in the manifest, so ids are never decoded with another vocabulary.
 */
export async function buildEncoder(dir: string, m: Manifest, tokenizerFile?: string): Promise<Encoder> {
  const name = m.tokenizer?.name;
  if (typeof name !== "string") throw new SiftpackError("SP_MANIFEST", `${join(dir, "manifest.json")}: names no tokenizer`);
  if (ENCODINGS.includes(name) && tokenizerFile === undefined) return loadEncoding(name);
  const opts = tokenizeOptions(m);
  let path: string;
  if (tokenizerFile !== undefined) path = tokenizerFile;
  else if (name.startsWith("trained@")) path = join(dir, TRAINED_FILE);
  else {
    const info = await readBuildInfo(dir);
    if (opts.tokenizer === undefined || info === undefined) throw noFile(dir, name, "its pipeline's tokenizer file is not recorded");
    path = resolve(info.base_dir, opts.tokenizer);
    if (!existsSync(path)) throw noFile(dir, name, `${path} (the pipeline's tokenizer file) is gone`);
  }
  const enc = loadTokenizerFile(path, { eosToken: opts.eos_token ?? DEFAULT_EOS });
  if (ENCODINGS.includes(name) || digestOf(enc.name) !== digestOf(name))
    throw new SiftpackError("SP_USAGE", `${path} is not the tokenizer ${dir} was built with (the build used ${name}; this file is ${enc.name})`);
  return enc;
}

function noFile(dir: string, name: string, why: string): SiftpackError {
  return new SiftpackError("SP_USAGE", `${dir} was built with the tokenizer file ${name}, but ${why}: pass it with --tokenizer FILE`);
}
