// Reading the JSON-lines files we write ourselves (decisions, collected keys).

import { open } from "node:fs/promises";

/**
 * The lines of a file we wrote (JSON lines: "\n" ends a line, never inside one), read in large
 * chunks and split on the newline byte: readline's decoder and line regex cost more than parsing.
 */
export async function* jsonLines(path: string): AsyncGenerator<string> {
  const fh = await open(path, "r");
  try {
    let buf = Buffer.allocUnsafe(1 << 22);
    let filled = 0;
    for (;;) {
      if (filled === buf.length) {
        const bigger = Buffer.allocUnsafe(buf.length * 2);
        buf.copy(bigger, 0, 0, filled);
        buf = bigger;
      }
      const { bytesRead } = await fh.read(buf, filled, buf.length - filled, null);
      if (bytesRead === 0) break;
      const end = filled + bytesRead;
      let start = 0;
      for (let nl = buf.indexOf(10, filled); nl >= 0 && nl < end; nl = buf.indexOf(10, start)) {
        if (nl > start) yield buf.toString("utf8", start, nl);
        start = nl + 1;
        if (start >= end) break;
      }
      // Keep the unfinished line at the front for the next read.
      filled = end - start;
      if (start > 0 && filled > 0) buf.copy(buf, 0, start, end);
    }
    if (filled > 0) yield buf.toString("utf8", 0, filled);
  } finally {
    await fh.close();
  }
}
