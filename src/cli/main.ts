// The command line: parses arguments with yargs, runs one command, maps errors to exit codes.
import yargs from "yargs";
import { SiftpackError, isSystemError, systemErrorCode, systemErrorHint, systemErrorLine } from "../errors.js";
import { runCommand } from "./run.js";
import { planCommand } from "./plan.js";
import { verifyCommand } from "./verify.js";
import { statsCommand } from "./stats.js";
import { encodeCommand } from "./encode.js";
import { toolVersion } from "../output/manifest.js";

/** Prints an error for a person: one line, then its details; a stack only with SIFTPACK_DEBUG=1. */
export function reportError(err: unknown): number {
  if (err instanceof SiftpackError) {
    // A message built around a full disk or a denied write says what to do, once (a missing file's message says which).
    const hint = isSystemError(err.cause) && systemErrorCode(err.cause) !== "ENOENT" ? systemErrorHint(err.cause) : undefined;
    process.stderr.write(`siftpack: error: ${err.message}${hint && !err.message.includes(hint) ? `; ${hint}` : ""}\n`);
    for (const d of err.details) process.stderr.write(`  ${d}\n`);
    if (process.env.SIFTPACK_DEBUG && err.cause) process.stderr.write(`${(err.cause as Error).stack ?? err.cause}\n`);
    return err.exitCode;
  }
  // A fault of the machine (a full disk, a folder made read-only) that no message was built around: still not a bug.
  if (isSystemError(err)) {
    process.stderr.write(`siftpack: error: ${systemErrorLine(err)}\n`);
    if (process.env.SIFTPACK_DEBUG) process.stderr.write(`${err.stack}\n`);
    return 1;
  }
  const e = err as Error;
  process.stderr.write(`siftpack: internal error: ${e?.message ?? String(err)} (set SIFTPACK_DEBUG=1 for the stack; please report it)\n`);
  if (process.env.SIFTPACK_DEBUG) process.stderr.write(`${e?.stack}\n`);
  return 1;
}

export async function main(argv: string[]): Promise<number> {
  try {
    await yargs(argv)
      .scriptName("siftpack")
      .usage("$0 <command> [options]\n\nTurns raw text exports into packed token blocks for next-token training.")
      .command(runCommand)
      .command(planCommand)
      .command(verifyCommand)
      .command(statsCommand)
      .command(encodeCommand)
      .command((await import("./inspect.js")).inspectCommand)
      .command((await import("./overlap.js")).overlapCommand)
      .command((await import("./report.js")).reportCommand)
      .command((await import("./init.js")).initCommand)
      .command((await import("./task.js")).taskCommand)
      .command((await import("./status.js")).statusCommand)
      .demandCommand(1, "name a command")
      .strict()
      .version(toolVersion())
      .help()
      .exitProcess(false)
      .fail((msg, err) => {
        throw err ?? new SiftpackError("SP_USAGE", msg);
      })
      .parseAsync();
    return 0;
  } catch (err) {
    return reportError(err);
  }
}
