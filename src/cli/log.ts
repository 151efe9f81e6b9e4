// The JSON log on stderr (pino); results go to stdout, so logs never mix with them.
import pino from "pino";
import type { Logger } from "../types.js";

/** `sink` replaces stderr, e.g. with a writer that keeps progress bars below the log lines. */
export function makeLogger(level: string = process.env.SIFTPACK_LOG ?? "info", sink?: { write(s: string): void }): Logger {
  return pino({ level, base: undefined }, sink ?? pino.destination({ fd: 2, sync: true }));
}
