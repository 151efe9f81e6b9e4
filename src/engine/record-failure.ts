// Shared by the per-file phases: an input file's unit id, and errors of a stage that failed on a record.
import { SiftpackError } from "../errors.js";

/** How far reading has got: the input files finished (and their bytes on disk), and the one being read. */
export interface InputProgress {
  bytesDone: number;
  filesDone: number;
  /** Absolute path and size of the file being read (absent between files and at the end). */
  file?: string;
  fileSize?: number;
}

export function unitId(source: string, file: string): string {
  return `${source}\u0000${file}`;
}

/** A stage that threw on a record (in a worker or here) becomes an error naming the record. */
export function recordFailure(err: unknown): unknown {
  const where = (err as { where?: { file: string; line: number; source: string; id: string } })?.where;
  if (!where || err instanceof SiftpackError) return err;
  return new SiftpackError("SP_STAGE", `a stage failed on record "${where.id}" (source ${where.source}, ${where.file}:${where.line}): ${(err as Error).message}`, { cause: err });
}
