// Shared by the per-unit phases: an input file's id in the token cache, and errors of a stage that failed on a record.
import { SiftpackError } from "../errors.js";

export function unitId(source: string, file: string): string {
  return `${source}\u0000${file}`;
}

/** A stage that threw on a record (in a worker or here) becomes an error naming the record. */
export function recordFailure(err: unknown): unknown {
  const where = (err as { where?: { file: string; line: number; source: string; id: string } })?.where;
  if (!where || err instanceof SiftpackError) return err;
  return new SiftpackError("SP_STAGE", `a stage failed on record "${where.id}" (source ${where.source}, ${where.file}:${where.line}): ${(err as Error).message}`, { cause: err });
}
