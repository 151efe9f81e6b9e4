// `siftpack run FILE`: builds the dataset and prints a summary; with --lock, records or checks a lock file.
import type { CommandModule } from "yargs";
import { displayPath, type LoadedPipeline } from "../pipeline/load.js";
import { checkPipeline } from "../pipeline/preflight.js";
import { runPipeline } from "../engine/run.js";
import { compareLocks, lockOf, readLock, writeLock } from "../output/lock.js";
import { discardStaging } from "../output/output-dir.js";
import { SiftpackError } from "../errors.js";
import type { Manifest } from "../output/manifest.js";
import { progressDisplay } from "./progress.js";
import { formatSummary } from "./summary.js";
import { cacheDirOf, type CacheReport } from "../cache/build-cache.js";

interface Args {
  file: string;
  out?: string;
  workers?: number;
  json?: boolean;
  lock?: string;
  check?: boolean;
  cache?: boolean;
  quiet?: boolean;
  keepWork?: boolean;
  force?: boolean;
}

function upToDateLine(hashed: number, m: Manifest): string {
  const files = m.inputs.length;
  return `up to date: the same ${files} input file${files === 1 ? "" : "s"}${hashed ? ` (${hashed} touched, same bytes)` : ""}, settings and siftpack as this build; nothing rebuilt (--force builds anyway)\n`;
}

function cacheLine(c: CacheReport, dir: string): string {
  const t = c.tokens;
  const records = t.records_reused + t.records_computed;
  // Token ids are looked up only for units whose passes ran: none when every later step was reused.
  const tokens = records > 0 ? `token ids of ${t.records_reused} of ${records} records reused; ` : "";
  return `cache: read ${c.read.reused} of ${c.read.reused + c.read.computed} files reused; ${c.steps.reused} of ${c.steps.reused + c.steps.computed} later steps reused; ${tokens}${cacheSizeText(c, dir)}\n`;
}

/** "24 entries, 489 kB in build/.demo.cache" (and what pruning removed). */
function cacheSizeText(c: CacheReport, dir: string): string {
  const b = c.size.bytes;
  const size = b >= 1e6 ? `${(b / 1e6).toFixed(1)} MB` : `${Math.round(b / 1e3)} kB`;
  return `${c.size.entries} entr${c.size.entries === 1 ? "y" : "ies"}, ${size} in ${dir}${c.size.removed ? ` (${c.size.removed} unused removed)` : ""}`;
}

export const runCommand: CommandModule<object, Args> = {
  command: "run <file>",
  describe: "build the dataset described by a pipeline file",
  builder: (y) =>
    y
      .positional("file", { type: "string", demandOption: true, describe: "pipeline file (YAML or JSON)" })
      .option("out", { type: "string", describe: "output directory (overrides output.dir)" })
      .option("workers", { type: "number", describe: "threads for the per-record stages and the tokenizer (default: the machine's cores); output is the same for any number" })
      .option("json", { type: "boolean", describe: "print the manifest's counts as JSON" })
      .option("lock", { type: "string", describe: "lock file: written after a build when missing (or without --check)" })
      .option("cache", { type: "boolean", default: true, describe: "reuse per-file results of earlier builds (--no-cache recomputes them)" })
      .option("check", { type: "boolean", describe: "with --lock: fail (exit 1) listing what differs from the lock, and leave it unchanged" })
      .option("force", { type: "boolean", describe: "build even when the earlier build is up to date (same inputs, settings and siftpack)" })
      .option("keep-work", { type: "boolean", describe: "keep the phases' work directory (.<out>.run beside the output) after the build" })
      .option("quiet", { type: "boolean", describe: "warnings and errors only: no progress lines, no closing table, log level warn (unless SIFTPACK_LOG is set)" })
      .check((a) => {
        if (a.check && !a.lock) throw new SiftpackError("SP_USAGE", "--check needs --lock FILE");
        return true;
      }),
  handler: async (args) => {
    // The display owns the logger, so that on a terminal log lines are written above the progress lines.
    const display = progressDisplay({ quiet: args.quiet });
    const log = display.log;
    let finished = false;
    let pipeline: LoadedPipeline | undefined;
    try {
      // What `plan` checks (inputs, protected and tokenizer files, the output folder), before anything is written beside the output.
      pipeline = await checkPipeline(args.file, { outDir: args.out });
      const locked = args.lock ? await readLock(args.lock) : undefined;
      if (args.check && !locked) throw new SiftpackError("SP_LOCK", `--check: no lock file at ${args.lock}; run once with --lock (without --check) to write it`);
      // Nothing changed since the last build (inputs, files stages read, settings, versions): it says so and leaves it.
      const { manifest, outDir, cache, upToDate } = await runPipeline(pipeline, { log, onProgress: (p) => display.update(p), cache: args.cache, workers: args.workers, keepWork: args.keepWork, skipFresh: !args.force && args.cache !== false });
      display.finish(true);
      finished = true;
      const cacheDir = displayPath(cacheDirOf(outDir));
      if (args.json) process.stdout.write(JSON.stringify({ dir: outDir, build_hash: manifest.build_hash, up_to_date: upToDate !== undefined, records: manifest.records, splits: manifest.splits, ...(manifest.mixture ? { mixture: manifest.mixture } : {}), cache: { ...cache, dir: cacheDirOf(outDir) } }, null, 2) + "\n");
      else process.stdout.write(formatSummary(displayPath(outDir), manifest) + (upToDate ? upToDateLine(upToDate.hashed, manifest) + `cache: ${cacheSizeText(cache, cacheDir)}\n` : cacheLine(cache, cacheDir)));
      if (args.lock) {
        const now = lockOf(manifest);
        if (args.check) {
          const diffs = compareLocks(locked!, now);
          if (diffs.length > 0) throw new SiftpackError("SP_LOCK", `the build differs from ${args.lock} in ${diffs.length} way${diffs.length > 1 ? "s" : ""}`, { details: diffs });
          if (!args.json) process.stdout.write(`lock ${args.lock}: the build matches (build ${now.build_hash})\n`);
        } else {
          await writeLock(args.lock, now);
          if (!args.json) process.stdout.write(`lock ${args.lock} ${locked ? "updated" : "written"} (build ${now.build_hash})\n`);
        }
      }
    } catch (err) {
      // A failed build leaves no half-written .<out>.partial behind (the cache beside it stays, for the next run).
      if (!finished && pipeline) {
        const left = await discardStaging(pipeline.outDir);
        if (left?.kept === "finished") log.warn({ staging: left.path }, `the finished build could not be moved into place; it is in ${left.path}`);
        // On a read-only or full disk the removal fails too; that must not add to the build's own error.
        else if (left) log.debug({ staging: left.path }, `cannot remove ${left.path}; the next run removes it`);
      }
      throw err;
    } finally {
      // Erases the progress lines before the error is printed; a failed build gets no table.
      if (!finished) display.finish(false);
    }
  },
};
