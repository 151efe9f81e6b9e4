// `siftpack stats DIR`: documents, tokens, blocks and padding per split; record fates per source.
import type { CommandModule } from "yargs";
import { readManifest } from "../output/manifest.js";
import { recordsLine, splitTable, table } from "./summary.js";

interface Args {
  dir: string;
  json?: boolean;
}

export const statsCommand: CommandModule<object, Args> = {
  command: "stats <dir>",
  describe: "documents, tokens, blocks and padding per split and source",
  builder: (y) => y.positional("dir", { type: "string", demandOption: true }).option("json", { type: "boolean" }),
  handler: async (args) => {
    const m = await readManifest(args.dir);
    if (args.json) {
      const splits = Object.fromEntries(Object.entries(m.splits).map(([k, s]) => [k, { ...s, shards: s.shards.length, padding_fraction: s.blocks ? s.padding_tokens / (s.blocks * m.length) : 0 }]));
      process.stdout.write(JSON.stringify({ length: m.length, tokenizer: m.tokenizer.name, splits, records: m.records }, null, 2) + "\n");
      return;
    }
    let out = `${args.dir}: ${m.tokenizer.name}, blocks of ${m.length} tokens (${m.dtype}), build ${m.build_hash}\n\n`;
    out += splitTable(m) + "\n" + recordsLine(m) + "\n";
    const rows: (string | number)[][] = [["source", "read", "kept", "dropped", "quarantined"]];
    for (const [name, s] of Object.entries(m.records.by_source)) rows.push([name, s.read, s.kept, s.dropped, s.quarantined]);
    out += table(rows);
    process.stdout.write(out);
  },
};
