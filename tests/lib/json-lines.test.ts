// jsonLines: the byte-splitting line reader of the build's own JSON-lines files.
import { describe, expect, it } from "vitest";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import fc from "fast-check";
import { jsonLines } from "../../src/lib/json-lines.js";

async function linesOf(content: string | Buffer): Promise<string[]> {
  const path = join(mkdtempSync(join(tmpdir(), "siftpack-lines-")), "f.jsonl");
  writeFileSync(path, content);
  const out: string[] = [];
  for await (const l of jsonLines(path)) out.push(l);
  return out;
}

describe("jsonLines", () => {
  it("gives what splitting on newlines gives, empty lines left out, with or without a final newline", async () => {
    await fc.assert(
      fc.asyncProperty(fc.array(fc.string({ unit: "grapheme", maxLength: 40 }).map((s) => s.replace(/\n/g, "")), { maxLength: 30 }), fc.boolean(), async (lines, final) => {
        const text = lines.join("\n") + (final ? "\n" : "");
        expect(await linesOf(text)).toEqual(lines.filter((l) => l !== ""));
      }),
      { numRuns: 100 },
    );
  });

  it("reads lines longer than its 4 MiB buffer and multi-byte characters across reads", async () => {
    const long = "é".repeat(3 << 20); // 6 MiB of two-byte characters
    const lines = ["a", long, "ß€𝄞".repeat(1000), long.slice(1) + "x", "z"];
    expect(await linesOf(lines.join("\n"))).toEqual(lines);
  });
});
