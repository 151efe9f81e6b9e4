// `siftpack stats DIR`: documents, tokens, blocks, padding and cuts per split; document lengths; record fates per source.
import type { CommandModule } from "yargs";
import { readManifest } from "../output/manifest.js";
import { statsFigures } from "../report/figures.js";
import { conversationTable, lengthTable, mixtureLines, pct, recordsLine, splitTable, table } from "./summary.js";
import type { GroupStats } from "../analysis/token-stats-steps.js";

interface Args {
  dir: string;
  json?: boolean;
}

export const statsCommand: CommandModule<object, Args> = {
  command: "stats <dir>",
  describe: "documents, tokens, blocks, padding and cuts per split; document lengths; records per source",
  builder: (y) => y.positional("dir", { type: "string", demandOption: true }).option("json", { type: "boolean" }),
  handler: async (args) => {
    const m = await readManifest(args.dir);
    if (args.json) {
      // The same figures the HTML report embeds: one source for both.
      process.stdout.write(JSON.stringify(statsFigures(m), null, 2) + "\n");
      return;
    }
    let out = `${args.dir}: ${m.tokenizer.name}, blocks of ${m.length} tokens (${m.dtype}), ${m.strategy} packing, build ${m.build_hash}\n\n`;
    out += splitTable(m, { detail: true });
    out += "  cut docs: documents placed in two or more pieces; lost targets: tokens that are not targets only because of a cut;\n";
    out += "  continuation: tokens in the later pieces of cut documents (they see only part of their document)\n";
    const conversations = conversationTable(m);
    if (conversations) out += "\nconversations (tokens per role include the role's markers; trained: the roles in train_on, as laid out)\n" + conversations;
    const lengths = lengthTable(m);
    if (lengths) out += "\ndocument lengths in tokens (end-of-text included), documents per split\n" + lengths;
    out += "\n" + recordsLine(m) + "\n";
    const allTokens = Object.values(m.records.by_source).reduce((a, s) => a + (s.tokens ?? 0), 0);
    const rows: (string | number)[][] = [["source", "read", "kept", "dropped", "quarantined", "tokens", "token share"]];
    for (const [name, s] of Object.entries(m.records.by_source)) rows.push([name, s.read, s.kept, s.dropped, s.quarantined, s.tokens ?? 0, pct(s.tokens ?? 0, allTokens)]);
    out += table(rows);
    const mixture = mixtureLines(m);
    if (mixture) out += "\n" + mixture;
    const ts = m.token_stats as Record<string, { all: GroupStats; by_source: Record<string, GroupStats> }> | undefined;
    if (ts) {
      out += "\ntokens per split and source (documents as kept, before repeats by weight or mixture)\n";
      const t: (string | number)[][] = [["split", "source", "documents", "tokens", "targets", "bytes/token", "mean", "p50", "p90", "p99", "max"]];
      for (const [split, g] of Object.entries(ts)) {
        for (const [source, s] of [["all", g.all] as const, ...Object.entries(g.by_source)]) {
          t.push([split, source, s.documents, s.tokens, s.target_tokens, s.bytes_per_token.toFixed(2), s.mean_tokens.toFixed(1), s.percentiles.p50, s.percentiles.p90, s.percentiles.p99, s.percentiles.max]);
        }
      }
      out += table(t);
    }
    process.stdout.write(out);
  },
};
