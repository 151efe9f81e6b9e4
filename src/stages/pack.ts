// pack: the option schema of the pack stage and the factory that builds each split's packer (the run's sink).
import { defineStage } from "./stage.js";
import { field, list, num, obj, refine, str, type Infer, type Schema } from "../pipeline/schema.js";
import type { Packer, RowSink } from "../pack/packer.js";
import { ConcatPacker } from "../pack/concat.js";
import { BestFitPacker } from "../pack/best-fit.js";
import { SinglePacker } from "../pack/single.js";
import { RowShuffle, ShuffledPacker } from "../pack/row-shuffle.js";
import { seedFor } from "../pack/rng.js";

export { ConcatPacker } from "../pack/concat.js";
export { BestFitPacker } from "../pack/best-fit.js";
export { SinglePacker } from "../pack/single.js";
export type { Packer, RowSink } from "../pack/packer.js";
export type { PackStats } from "../pack/tally.js";

export const STRATEGIES = ["concat", "best-fit", "single"] as const;
export const LONG_CONVERSATIONS = ["at_turns", "drop", "anywhere"] as const;
const SPLITS = ["train", "val", "test"] as const;
/** Pieces best-fit holds before packing them when `buffer_docs` is not given. */
export const DEFAULT_BUFFER_DOCS = 10_000;

/** `shuffle`: true (every split), false (none) or the splits to shuffle (a single name is accepted too). */
const shuffleSchema: Schema<boolean | string[]> = {
  describe: "true, false or a list of splits (train, val, test)",
  check(value, path, issues) {
    if (typeof value === "boolean") return value;
    return list(str({ oneOf: SPLITS }), { orSingle: true }).check(value, path, issues);
  },
};

export const packOptions = refine(
  obj({
    length: field(num({ integer: true, min: 2, max: 1 << 20 }), { default: 1024 }),
    strategy: field(str({ oneOf: STRATEGIES }), { default: "concat" }),
    emit: field(list(str({ oneOf: ["positions", "target_mask", "cu_seqlens"] })), { default: [] }),
    // No schema default: the key only means something for best-fit (see the rule below).
    buffer_docs: field(num({ integer: true, min: 1, max: 10_000_000 })),
    // Training rows are shuffled by default; held-out rows keep packing order (their loss is summed
    // over all rows, so order does not matter, and unshuffled rows are easier to trace back).
    shuffle: field(shuffleSchema, { default: ["train"] }),
    shuffle_window: field(num({ integer: true, min: 1, max: 10_000_000 }), { default: 4096 }),
    // Input megabytes per packing group: consecutive input files are packed, shuffled and written
    // together, one task per group; a group ends before the file that would take it past this size,
    // and a larger JSONL file is cut into groups of its rows. 32 MB: enough groups for every core on
    // a 50 MB input, and still thousands of blocks per group (the extra padding is measured in the README).
    group_mb: field(num({ min: 0.000001, max: 1e9 }), { default: 32 }),
    // A conversation longer than the block: cut at turn edges (at_turns, the default), left out with
    // a ledger reason (drop), or cut like any document (anywhere). No schema default, so a pipeline
    // without conversations resolves (and hashes) as before.
    long_conversations: field(str({ oneOf: LONG_CONVERSATIONS })),
  }),
  (o, path, issues) => {
    if (o.buffer_docs !== undefined && o.strategy !== "best-fit")
      issues.push({ path: [...path, "buffer_docs"], atKey: true, message: `buffer_docs applies to strategy best-fit only (strategy is ${o.strategy})` });
  },
);
export type PackOptions = Infer<typeof packOptions>;

/** Whether the rows of `split` go through the shuffle buffer. */
export function shufflesSplit(shuffle: boolean | string[], split: string): boolean {
  return typeof shuffle === "boolean" ? shuffle : shuffle.includes(split);
}

/** Where a packer is used: the pipeline seed, the split and the packing group, which together seed its row shuffle. */
export interface PackContext {
  seed: number;
  split: string;
  group?: number;
}

export function createPacker(o: PackOptions, padId: number, sink: RowSink, ctx: PackContext): Packer {
  const shuffle = shufflesSplit(o.shuffle, ctx.split) ? new RowShuffle(o.length, o.shuffle_window, seedFor(ctx.seed, ctx.group === undefined ? `shuffle:${ctx.split}` : `shuffle:${ctx.split}:${ctx.group}`), sink) : undefined;
  const out = shuffle?.sink ?? sink;
  let packer: Packer;
  switch (o.strategy) {
    case "concat":
      packer = new ConcatPacker(o.length, padId, out);
      break;
    case "best-fit":
      packer = new BestFitPacker(o.length, padId, out, o.buffer_docs ?? DEFAULT_BUFFER_DOCS);
      break;
    case "single":
      packer = new SinglePacker(o.length, padId, out);
      break;
    default:
      throw new Error(`unknown packing strategy ${String(o.strategy)}`);
  }
  return shuffle ? new ShuffledPacker(packer, shuffle) : packer;
}

const MB = 1 << 20;

export default defineStage({
  name: "pack",
  summary: "fixed-length rows with document segment ids",
  options: packOptions,
  // The build's assemble phase drives packing (one packer per split); as a stage it passes records through.
  form: { kind: "sink" },
  create() {
    return (input) => input;
  },
  explain(o) {
    // Upper bounds of what packing holds in memory per split, so a user can size length and windows.
    const extra: Record<string, unknown> = {};
    if (o.strategy === "best-fit") {
      extra.buffer_docs = o.buffer_docs ?? DEFAULT_BUFFER_DOCS;
      extra.buffer_memory_mb = Math.ceil((extra.buffer_docs as number) * o.length * 4 / MB);
    }
    if (o.shuffle === true || (Array.isArray(o.shuffle) && o.shuffle.length > 0)) extra.shuffle_memory_mb = Math.ceil(o.shuffle_window * o.length * 8 / MB);
    return extra;
  },
});
