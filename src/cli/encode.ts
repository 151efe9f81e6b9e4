// `siftpack encode [--encoding NAME | --tokenizer PATH] [FILE]`: prints the token ids of a text as JSON (stdin when no FILE).
import { readFile } from "node:fs/promises";
import type { CommandModule } from "yargs";
import { ENCODINGS, loadEncoding, loadTokenizerFile } from "../tokenizer/index.js";
import { SiftpackError, describeSystemError } from "../errors.js";

interface Args {
  file?: string;
  encoding?: string;
  tokenizer?: string;
  "eos-token"?: string;
  decode?: boolean;
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
      .conflicts("encoding", "tokenizer")
      .option("decode", { type: "boolean", describe: "read a JSON list of ids and print the text" }),
  handler: async (args) => {
    const enc =
      args.tokenizer !== undefined
        ? loadTokenizerFile(args.tokenizer, args["eos-token"] !== undefined ? { eosToken: args["eos-token"] } : {})
        : loadEncoding(args.encoding ?? "gpt2");
    const input = await readInput(args.file);
    if (args.decode) {
      let ids: unknown;
      try {
        ids = JSON.parse(input);
      } catch {
        ids = undefined;
      }
      if (!Array.isArray(ids) || !ids.every((x) => Number.isInteger(x) && x >= 0 && x < enc.vocabSize))
        throw new SiftpackError("SP_USAGE", `--decode expects a JSON list of token ids below ${enc.vocabSize}`);
      process.stdout.write(enc.decode(ids as number[]));
      return;
    }
    process.stdout.write(JSON.stringify(Array.from(enc.encode(input))) + "\n");
  },
};
