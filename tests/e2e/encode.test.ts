// `siftpack encode`: ids as JSON from a file or stdin, and back with --decode.
import { describe, expect, it } from "vitest";
import { writeFileSync } from "node:fs";
import { join } from "node:path";
import { siftpack, tempDir } from "./cli.js";
import { get_encoding } from "tiktoken";

describe("encode", () => {
  it("prints the ids of stdin as JSON, equal to the reference (tiktoken)", () => {
    const text = "Tram 14 left Harrow Lane depot at 05:42 — pantograph OK.\n\n   Next   check: 2026-12-01.";
    const r = siftpack(["encode", "--encoding", "gpt2"], { input: text });
    expect(r.code).toBe(0);
    const ref = get_encoding("gpt2");
    expect(JSON.parse(r.stdout)).toEqual(Array.from(ref.encode_ordinary(text)));
    ref.free();
  });

  it("reads a file, and --decode turns ids back into the text", () => {
    const dir = tempDir("enc");
    writeFileSync(join(dir, "t.txt"), "Wheel flat on car 12.");
    const ids = siftpack(["encode", "--encoding", "cl100k_base", join(dir, "t.txt")]).stdout;
    const back = siftpack(["encode", "--encoding", "cl100k_base", "--decode"], { input: ids });
    expect(back.stdout).toBe("Wheel flat on car 12.");
  });

  it("rejects an unknown encoding (exit 2) and a missing file (exit 1) in one line", () => {
    const bad = siftpack(["encode", "--encoding", "nope"], { input: "" });
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/Choices: "gpt2"/);
    const missing = siftpack(["encode", "/nonexistent/file.txt"]);
    expect(missing.code).toBe(1);
    expect(missing.stderr).toBe("siftpack: error: /nonexistent/file.txt: no such file or directory\n");
  });
});
