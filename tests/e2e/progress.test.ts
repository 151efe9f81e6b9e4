// Progress of `siftpack run`: bars and a closing table on a terminal (a pseudo-terminal made by util-linux `script`), JSON lines only on a pipe or with --quiet.
import { afterEach, describe, expect, it, vi } from "vitest";
import { spawnSync } from "node:child_process";
import { join } from "node:path";
import { ROOT, siftpack, tempDir } from "./cli.js";
import { bar, formatBytes, formatDuration, progressDisplay, ProgressState } from "../../src/cli/progress.js";
import type { RunProgress } from "../../src/engine/run.js";

const ESC = "\x1b";

/** Runs the CLI with stdout and stderr on a pseudo-terminal; returns what the terminal received. */
function onTerminal(args: string[], env: Record<string, string> = {}): { code: number; text: string; ms: number } {
  const cmd = [process.execPath, join(ROOT, "bin/siftpack.js"), ...args].map((a) => `'${a.replace(/'/g, "'\\''")}'`).join(" ");
  const started = Date.now();
  // -q quiet, -f flush at once, -e the command's exit code, -c the command; the typescript file is thrown away.
  const r = spawnSync("script", ["-qfec", cmd, "/dev/null"], { cwd: ROOT, encoding: "utf8", env: { ...process.env, SIFTPACK_LOG: "info", COLUMNS: "120", ...env }, maxBuffer: 64 << 20 });
  if (r.error) throw new Error(`script (util-linux) is needed for this test: ${r.error.message}`);
  return { code: r.status ?? -1, text: r.stdout, ms: Date.now() - started };
}

const progress = (over: Partial<RunProgress> = {}): RunProgress => ({ read: 0, kept: 0, dropped: 0, quarantined: 0, bytesDone: 0, filesDone: 0, bytesTotal: 1000, filesTotal: 4, ...over });

describe("run on a terminal", () => {
  it("draws the input bar and the records line, erases them, and ends with the summary table", () => {
    const out = join(tempDir("progress-tty"), "demo");
    const r = onTerminal(["run", "pipelines/demo.yaml", "--out", out, "--no-cache"]);
    expect(r.code, r.text).toBe(0);
    const frames = r.text.split(`${ESC}[J`).length - 1;
    expect(frames).toBeGreaterThan(0);
    expect(r.text).toMatch(/input +[█▏▎▍▌▋▊▉░]+ +\d+%/);
    expect(r.text).toMatch(/records [\d,]+ done: [\d,]+ kept, [\d,]+ dropped, [\d,]+ quarantined/);
    // Redraws: the first frame, then at most five a second (and one per log line written above them).
    const logLines = (r.text.match(/^\{"level":/gm) ?? []).length;
    expect(frames).toBeLessThanOrEqual(1 + Math.ceil((5 * r.ms) / 1000) + 2 * logLines);
    // After the last erase: no bar, the table, then the build summary on stdout.
    const tail = r.text.slice(r.text.lastIndexOf(`${ESC}[J`) + 3);
    expect(tail).not.toMatch(/[█░]/);
    expect(tail).toMatch(/^phase +time +amount +rate\r?\nread input +[\d.]+ s +[\d.]+ kB in 12 files/);
    expect(tail).toMatch(/^records +[\d.]+ s +539 \(\d+ kept\)/m);
    expect(tail).toMatch(/^total +[\d.]+ s/m);
    expect(tail).toMatch(/^built .*demo/m);
  });

  it("draws nothing with --quiet: only JSON lines on stderr", () => {
    const out = join(tempDir("progress-quiet"), "demo");
    const r = onTerminal(["run", "pipelines/demo.yaml", "--out", out, "--quiet", "--json"]);
    expect(r.code, r.text).toBe(0);
    expect(r.text).not.toContain(ESC);
    expect(r.text).not.toMatch(/[█░]|^phase/m);
    // stdout's JSON is one document; the rest are log lines
    const lines = r.text.split(/\r?\n/).filter((l) => l.startsWith('{"level"'));
    expect(lines.length).toBeGreaterThan(0);
    for (const l of lines) expect(() => JSON.parse(l)).not.toThrow();
  });
});

describe("run on a pipe", () => {
  it("writes no bars: every stderr line is a JSON log line", () => {
    const out = join(tempDir("progress-pipe"), "demo");
    const r = siftpack(["run", "pipelines/demo.yaml", "--out", out, "--no-cache"], { env: { SIFTPACK_LOG: "info" } });
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).not.toContain(ESC);
    expect(r.stderr).not.toContain("\r");
    const lines = r.stderr.split("\n").filter(Boolean);
    expect(lines.length).toBeGreaterThan(1);
    for (const l of lines) expect(JSON.parse(l)).toHaveProperty("level");
    expect(r.stdout).toMatch(/^built /);
  });
});

describe("the progress display", () => {
  afterEach(() => vi.useRealTimers());

  it("redraws at most five times a second however often the build reports, and clears on finish", () => {
    vi.useFakeTimers();
    const writes: string[] = [];
    const d = progressDisplay({ stream: { isTTY: true, columns: 100, write: (s: string) => writes.push(s) }, level: "silent" });
    // 10 s of a build reporting every 10 ms
    for (let t = 0; t < 1000; t++) {
      d.update(progress({ read: t, kept: t, bytesDone: t, filesDone: Math.min(3, Math.floor(t / 300)), file: "/nonexistent/input.jsonl", fileSize: 300 }));
      vi.advanceTimersByTime(10);
    }
    const frames = writes.filter((w) => w.startsWith("input")).length;
    expect(frames).toBeGreaterThanOrEqual(45);
    expect(frames).toBeLessThanOrEqual(51);
    d.finish(true, { read: 1000, kept: 990, dropped: 10, quarantined: 0 });
    const end = writes.slice(-2).join("");
    expect(end).toMatch(/\x1b\[J/);
    expect(end).toContain("1,000 (990 kept)");
  });

  it("draws a bar from the bytes read, with the rate and the time left", () => {
    const s = new ProgressState(0, () => 150);
    s.update(progress({ bytesDone: 0, file: "/x", fileSize: 400 }), 0);
    s.frame(0, 120);
    s.update(progress({ read: 10, kept: 9, dropped: 1, bytesDone: 400, filesDone: 1, file: "/y", fileSize: 200 }), 2000);
    // 150 bytes at 0 s, 400 + 150 at 2 s: 200 B/s, 450 bytes left: 2.25 s
    const [input, records] = s.frame(2000, 120);
    expect(input).toMatch(/^input +[█▏▎▍▌▋▊▉░]+  55%  550 B \/ 1.00 kB · file 2\/4 · 200 B\/s · 2\.3 s left$/);
    expect(records).toBe("records 10 done: 9 kept, 1 dropped, 0 quarantined · 5/s · 2.0 s so far");
    // The input bar never exceeds the terminal's width.
    for (const l of s.frame(2100, 40)) expect([...l].length).toBeLessThanOrEqual(39);
  });

  it("says when the input is read and the later stages are at work", () => {
    const s = new ProgressState(0, () => undefined);
    s.update(progress({ bytesDone: 1000, filesDone: 4, read: 30 }), 1500);
    const [input, records] = s.frame(1600, 200);
    expect(input).toContain("100%  1.00 kB in 4 files read in 1.5 s");
    expect(records).toContain("input read, later stages at work");
  });

  it("formats bars, sizes and durations", () => {
    expect(bar(0, 8)).toBe("░░░░░░░░");
    expect(bar(1, 8)).toBe("████████");
    expect(bar(0.5, 8)).toBe("████░░░░");
    expect(bar(1 / 16, 8)).toBe("▌░░░░░░░");
    for (let f = 0; f <= 1; f += 0.01) expect([...bar(f, 13)].length).toBe(13);
    expect(formatBytes(999)).toBe("999 B");
    expect(formatBytes(1500)).toBe("1.50 kB");
    expect(formatBytes(2_500_000_000)).toBe("2.50 GB");
    expect(formatDuration(1234)).toBe("1.2 s");
    expect(formatDuration(125_000)).toBe("2:05");
    expect(formatDuration(3_725_000)).toBe("1:02:05");
  });
});
