// `siftpack inspect DIR --split S --block N`: one packed block decoded, with document boundaries; optionally its attention-mask picture.
import { writeFile } from "node:fs/promises";
import { join } from "node:path";
import type { CommandModule } from "yargs";
import { readManifest, type Manifest } from "../output/manifest.js";
import { SiftpackError, describeSystemError } from "../errors.js";
import { readNpyRow } from "../pack/npy-row.js";
import { describeRow, learnFromOrigins, originText, rowTable, rowText, TRAINED_CLOSE, TRAINED_OPEN } from "../pack/row-report.js";
import { readOrigins, type OriginLine } from "../pack/origins.js";
import { buildEncoder } from "../pack/build-tokenizer.js";
import { maskSvg } from "../pack/mask-svg.js";
import { maskPng } from "../pack/mask-png.js";
import { targetMaskOf } from "../output/shard-writer.js";

interface Args {
  dir: string;
  split: string;
  block: number;
  ids?: boolean;
  mask?: string;
  json?: boolean;
  tokenizer?: string;
}

/** The shard holding block `block` of a split (blocks count from 0 across the split's shards in manifest order). */
function locate(m: Manifest, dir: string, split: string, block: number) {
  const s = m.splits[split];
  if (!s) {
    const names = Object.keys(m.splits);
    throw new SiftpackError("SP_USAGE", `--split ${JSON.stringify(split)}: ${dir} has no such split; splits: ${names.join(", ") || "(none)"}`);
  }
  if (!Number.isInteger(block) || block < 0 || block >= s.blocks) {
    const range = s.blocks === 0 ? "it has no blocks" : `valid blocks are 0–${s.blocks - 1}`;
    throw new SiftpackError("SP_USAGE", `--block ${Number.isNaN(block) ? "(not a number)" : block} is out of range for split "${split}": ${range}`);
  }
  let first = 0;
  for (const sh of s.shards) {
    if (block < first + sh.blocks) return { shard: sh, row: block - first, blocks: s.blocks };
    first += sh.blocks;
  }
  throw new SiftpackError("SP_MANIFEST", `${dir}: split "${split}" says ${s.blocks} blocks but its shards hold ${first}`);
}

async function readRow(dir: string, rel: string, row: number, length: number): Promise<Uint32Array> {
  const { values } = await readNpyRow(join(dir, rel), row).catch((err) => {
    throw new SiftpackError("SP_MANIFEST", `${join(dir, rel)}: ${describeSystemError(err)}`, { cause: err });
  });
  if (values.length !== length) throw new SiftpackError("SP_MANIFEST", `${join(dir, rel)}: rows hold ${values.length} values, the manifest says length ${length}`);
  return values;
}

/** The origins index lines of the row; undefined for a build made before the index existed. */
async function rowOrigins(dir: string, rel: string | undefined, row: number): Promise<OriginLine[] | undefined> {
  if (rel === undefined) return undefined;
  return readOrigins(join(dir, rel), row).catch((err) => {
    throw new SiftpackError("SP_MANIFEST", `${join(dir, rel)}: ${err.code ? describeSystemError(err) : err.message}`, { cause: err });
  });
}

export const inspectCommand: CommandModule<object, Args> = {
  command: "inspect <dir>",
  describe: "print one block decoded, with document boundaries (and its attention mask as SVG or PNG)",
  builder: (y) =>
    y
      .positional("dir", { type: "string", demandOption: true })
      .option("split", { type: "string", demandOption: true, describe: "train, val or test" })
      .option("block", { type: "number", demandOption: true, describe: "block index within the split, from 0" })
      .option("ids", { type: "boolean", describe: "one line per token: segment, position, target, id, text" })
      .option("mask", { type: "string", describe: "write the block's attention mask picture to this file: .svg (labelled) or .png (pixels only)" })
      .option("json", { type: "boolean" })
      .option("tokenizer", { type: "string", describe: "the tokenizer file the build used, when its pipeline's file has moved" }),
  handler: async (args) => {
    const kind = args.mask === undefined ? undefined : /\.(svg|png)$/i.exec(args.mask)?.[1].toLowerCase();
    if (args.mask !== undefined && kind === undefined) throw new SiftpackError("SP_USAGE", `--mask: name the picture file .svg or .png (got ${JSON.stringify(args.mask)})`);
    const m = await readManifest(args.dir);
    const { shard, row, blocks } = locate(m, args.dir, args.split, args.block);
    const tokens = await readRow(args.dir, shard.tokens, row, m.length);
    const segments = await readRow(args.dir, shard.segments, row, m.length);
    const origins = await rowOrigins(args.dir, shard.origins, row);
    const enc = await buildEncoder(args.dir, m, args.tokenizer);
    const learn = learnFromOrigins(origins, m.length);
    const input = { tokens, segments, decode: (ids: ArrayLike<number>) => enc.decode(ids), eosId: m.tokenizer.eos_id, eosAppended: m.tokenizer.eos, ...(learn ? { learn } : {}) };
    const report = describeRow(input);
    const where = `${shard.tokens.replace(/\.tokens\.npy$/, "")} row ${row}`;

    if (args.mask !== undefined) {
      const title = `${args.split} block ${args.block} — attention mask (${where})`;
      const targets = learn ? targetMaskOf(segments, m.length, learn) : undefined;
      const bytes = kind === "png" ? maskPng(segments, 800, targets).png : maskSvg(segments, { title, ...(targets ? { targets } : {}) }).svg;
      await writeFile(args.mask, bytes).catch((err) => {
        throw new SiftpackError("SP_OUTPUT", `${args.mask}: cannot write the mask picture: ${describeSystemError(err)}`, { cause: err });
      });
    }
    if (args.json) {
      const out = { split: args.split, block: args.block, blocks, shard: shard.tokens, row, ...report, ...(origins ? { origins } : {}), tokens: [...tokens], segments: [...segments], ...(args.mask ? { mask: args.mask } : {}) };
      process.stdout.write(JSON.stringify(out, null, 2) + "\n");
      return;
    }
    const pieces = report.pieces.filter((p) => p.segment !== 0).length;
    let out = `${args.split} block ${args.block} of ${blocks} (0–${blocks - 1}) · ${where} · ${m.tokenizer.name}\n`;
    out += `${report.length} tokens: ${pieces} document piece${pieces === 1 ? "" : "s"}, ${report.document_tokens} document tokens, ${report.padding} padding, ${report.targets} targets\n`;
    if (learn) out += `conversation pieces: the tokens trained on (targets) are between ${TRAINED_OPEN} and ${TRAINED_CLOSE}\n`;
    if (origins === undefined) out += `(no origins index: ${args.dir} was built before siftpack/2; rebuild to see which record each piece came from)\n`;
    out += "\n";
    if (args.ids && origins) out += origins.map((o) => `segment ${o.segment}: ${originText(o)}\n`).join("") + "\n";
    out += args.ids ? rowTable(input) : rowText(report, m.tokenizer.eos, origins);
    if (args.mask !== undefined) out += `\nmask picture: ${args.mask}\n`;
    process.stdout.write(out);
  },
};
