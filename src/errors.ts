// One error class for everything siftpack reports to a user: a stable code, an exit code, the cause.
import { accessSync, constants, existsSync } from "node:fs";
import { dirname } from "node:path";

/** Stable error codes; the table-driven test in tests/errors.test.ts lists them all. */
export const ERROR_CODES = {
  SP_PIPELINE_FILE: "the pipeline file cannot be read or parsed",
  SP_PIPELINE_KEY: "the pipeline file has invalid keys or values",
  SP_USAGE: "the command line is wrong",
  SP_INPUT_MISSING: "an input file or glob matched nothing or cannot be read",
  SP_INPUT_FORMAT: "an input file cannot be parsed at all",
  SP_BAD_FRACTION: "too many input records were quarantined",
  SP_OUTPUT: "the output directory cannot be written",
  SP_VERIFY: "an output file does not match the manifest",
  SP_MANIFEST: "a manifest is missing or unreadable",
  SP_TOKENIZER: "the tokenizer cannot be loaded or used",
  SP_LOCK: "the lock file is unreadable, or the build differs from it",
  SP_STAGE: "a stage failed on a record",
  SP_OVERLAP: "overlap between splits is above the allowed rate",
  SP_TASK_ORDER: "a task's phase cannot start: a task of an earlier phase has not finished",
  SP_WORK: "the work directory of a task plan is missing or unreadable",
  SP_MIXTURE: "the training mixture cannot be met from the train tokens there are",
} as const;

export type ErrorCode = keyof typeof ERROR_CODES;

/** Exit codes: 1 the work failed (data or I/O), 2 the command line or pipeline file is wrong. */
const USER_ERRORS: ReadonlySet<ErrorCode> = new Set(["SP_PIPELINE_FILE", "SP_PIPELINE_KEY", "SP_USAGE"]);

export class SiftpackError extends Error {
  readonly code: ErrorCode;
  readonly exitCode: 1 | 2;
  /** Extra lines printed under the message (e.g. every pipeline-file problem). */
  readonly details: string[];

  constructor(code: ErrorCode, message: string, options: { cause?: unknown; details?: string[] } = {}) {
    super(message, options.cause === undefined ? undefined : { cause: options.cause });
    this.name = "SiftpackError";
    this.code = code;
    this.exitCode = USER_ERRORS.has(code) ? 2 : 1;
    this.details = options.details ?? [];
  }
}

/**
 * The error's code, except that Node's recursive mkdir reports ENOENT where the folder could not be
 * made because its file system is read-only (or not writable): the deepest existing folder above
 * says which, by access(2), which touches nothing.
 */
export function systemErrorCode(err: unknown): string | undefined {
  const e = err as NodeJS.ErrnoException;
  if (e?.code !== "ENOENT" || e.syscall !== "mkdir" || typeof e.path !== "string") return e?.code;
  let dir = dirname(e.path);
  while (!existsSync(dir) && dirname(dir) !== dir) dir = dirname(dir);
  try {
    accessSync(dir, constants.W_OK);
    return e.code;
  } catch (probe) {
    const code = (probe as NodeJS.ErrnoException).code;
    return code === "EROFS" || code === "EACCES" ? code : e.code;
  }
}

/** A one-line description of a system error such as ENOENT, for messages. */
export function describeSystemError(err: unknown): string {
  const e = err as NodeJS.ErrnoException;
  switch (systemErrorCode(err)) {
    case "ENOENT":
      return "no such file or directory";
    case "EACCES":
    case "EPERM":
      return "permission denied";
    case "ENOSPC":
      return "no space left on device";
    case "EISDIR":
      return "is a directory";
    case "ENOTDIR":
      return "a path component is not a directory";
    case "EROFS":
      return "read-only file system";
    case "EDQUOT":
      return "disk quota exceeded";
    case "EMFILE":
    case "ENFILE":
      return "too many open files";
    case "EIO":
      return "input/output error";
    default:
      return e?.message ?? String(err);
  }
}

/** A failure of the machine or the file system (a Node errno error such as ENOSPC), not a bug. */
export function isSystemError(err: unknown): err is NodeJS.ErrnoException {
  const code = (err as NodeJS.ErrnoException)?.code;
  return err instanceof Error && typeof code === "string" && /^E[A-Z0-9]+$/.test(code);
}

/** What a person can do about a system error, for the end of its message; undefined when nothing general applies. */
export function systemErrorHint(err: unknown): string | undefined {
  switch (systemErrorCode(err)) {
    case "ENOSPC":
    case "EDQUOT":
      return "free some space there, or build elsewhere with --out";
    case "EACCES":
    case "EPERM":
      return "check the permissions there, or build elsewhere with --out";
    case "EROFS":
      return "build on a writable file system with --out";
    case "EMFILE":
    case "ENFILE":
      return "raise the open-file limit (ulimit -n) or use fewer --workers";
    case "ENOENT":
      return "check that it exists (was it moved or removed during the run?) and run again";
    default:
      return undefined;
  }
}

/**
 * One line for a system error that reached the top without a SiftpackError around it: the path
 * it concerns, plain words, and what to do.
 */
export function systemErrorLine(err: NodeJS.ErrnoException): string {
  const hint = systemErrorHint(err);
  return `${err.path ? `${err.path}: ` : ""}${describeSystemError(err)}${hint ? `; ${hint}` : ""}`;
}
