// `siftpack encode [--encoding NAME | --tokenizer PATH | --build DIR] [FILE]`: prints the token ids of a text as JSON (stdin when no FILE); `--decode` the reverse.
import { readFile } from "node:fs/promises";
import type { CommandModule } from "yargs";
import { ENCODINGS, loadEncoding, loadTokenizerFile, type Encoder } from "../tokenizer/index.js";
import { SiftpackError, describeSystemError } from "../errors.js";
import { readManifest } from "../output/manifest.js";
import { buildEncoder } from "../pack/build-tokenizer.js";

interface Args {
  file?: string;
  encoding?: string;
  tokenizer?: string;
  "eos-token"?: string;
  build?: string;
  decode?: boolean;
}

async function encoderOf(args: Args): Promise<Encoder> {
  if (args.build !== undefined) return buildEncoder(args.build, await readManifest(args.build), args.tokenizer);
  if (args.tokenizer !== undefined) return loadTokenizerFile(args.tokenizer, args["eos-token"] !== undefined ? { eosToken: args["eos-token"] } : {});
  return loadEncoding(args.encoding ?? "gpt2");
}

/** Which encoder was used, for messages. */
function encoderLabel(args: Args, enc: Encoder): string {
  if (args.build !== undefined) return `${enc.name}, the tokenizer of ${args.build}`;
  return args.tokenizer !== undefined ? args.tokenizer : `${enc.name}${args.encoding === undefined ? " (the default)" : ""}`;
}

/** The ids of a JSON list, each checked against the vocabulary; the first bad entry is named with what to do. */
function parseIds(input: string, enc: Encoder, args: Args): number[] {
  let ids: unknown;
  try {
    ids = JSON.parse(input);
  } catch (err) {
    throw new SiftpackError("SP_USAGE", `--decode expects a JSON list of token ids, e.g. [464, 6483]; the input is not JSON (${(err as Error).message})`);
  }
  if (!Array.isArray(ids)) throw new SiftpackError("SP_USAGE", "--decode expects a JSON list of token ids, e.g. [464, 6483]");
  for (let i = 0; i < ids.length; i++) {
    const x = ids[i];
    if (Number.isInteger(x) && x >= 0 && x < enc.vocabSize) continue;
    const what = Number.isInteger(x) && x >= 0 ? `${x} is not below ${enc.vocabSize}, the vocabulary size of ${encoderLabel(args, enc)}` : `${JSON.stringify(x)} is not a token id`;
    const hint = Number.isInteger(x) && x >= 0 && args.build === undefined ? `; name the tokenizer the ids come from: --build DIR (a build's own), --encoding NAME (${ENCODINGS.join(", ")}) or --tokenizer FILE` : "";
    throw new SiftpackError("SP_USAGE", `--decode: entry ${i} of the list: ${what}${hint}`);
  }
  return ids as number[];
}

async function readInput(file: string | undefined): Promise<string> {
  if (file === undefined || file === "-") {
    const chunks: Buffer[] = [];
    for await (const c of process.stdin) chunks.push(c as Buffer);
    return Buffer.concat(chunks).toString("utf8");
  }
  try {
    return await readFile(file, "utf8");
  } catch (err) {
    throw new SiftpackError("SP_INPUT_MISSING", `${file}: ${describeSystemError(err)}`, { cause: err });
  }
}

export const encodeCommand: CommandModule<object, Args> = {
  command: "encode [file]",
  describe: "print the token ids of a text as JSON (reads stdin without FILE)",
  builder: (y) =>
    y
      .positional("file", { type: "string" })
      // No yargs default for --encoding: with one, "conflicts" would fire on every --tokenizer.
      .option("encoding", { type: "string", choices: ENCODINGS as string[], describe: "a named encoding (default gpt2)" })
      .option("tokenizer", { type: "string", describe: "a byte-level BPE tokenizer file (JSON tokenizer-file format)" })
      .option("eos-token", { type: "string", describe: "with --tokenizer: the added token that ends documents (default <|endoftext|>)" })
      .option("build", { type: "string", describe: "use the tokenizer a build directory was made with (named, tokenizer file or trained)" })
      .conflicts("encoding", ["tokenizer", "build"])
      .option("decode", { type: "boolean", describe: "read a JSON list of ids and print the text" }),
  handler: async (args) => {
    const enc = await encoderOf(args);
    const input = await readInput(args.file);
    if (args.decode) {
      process.stdout.write(enc.decode(parseIds(input, enc, args)));
      return;
    }
    process.stdout.write(JSON.stringify(Array.from(enc.encode(input))) + "\n");
  },
};
