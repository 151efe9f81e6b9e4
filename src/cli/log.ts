// The JSON log on stderr (pino); results go to stdout, so logs never mix with them.
import pino from "pino";
import type { Logger } from "../types.js";

export function makeLogger(level: string = process.env.SIFTPACK_LOG ?? "info"): Logger {
  return pino({ level, base: undefined }, pino.destination({ fd: 2, sync: true }));
}
