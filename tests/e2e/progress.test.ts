// Progress of `siftpack run` and `siftpack task`: per-phase lines and a closing table on a terminal (a pseudo-terminal made by util-linux `script`), JSON lines only on a pipe, warnings only with --quiet.
import { afterEach, describe, expect, it, vi } from "vitest";
import { spawnSync } from "node:child_process";
import { join } from "node:path";
import { demoCopy, ROOT, siftpack, tempDir } from "./cli.js";
import { bar, formatBytes, formatDuration, progressDisplay, ProgressState } from "../../src/cli/progress.js";
import type { BuildProgress, PhaseProgress, PhaseTiming } from "../../src/engine/progress.js";

const ESC = "\x1b";
const BAR = "[█▏▎▍▌▋▊▉░]+";

/** Runs the CLI with stdout and stderr on a pseudo-terminal of 120 columns; returns what the terminal received. */
function onTerminal(args: string[], env: Record<string, string> = {}, cwd = ROOT): { code: number; text: string; ms: number } {
  const quote = (a: string) => `'${a.replace(/'/g, "'\\''")}'`;
  // script's terminal has no size of its own; stty gives it one, as a real terminal window would have.
  const cmd = `stty cols 120 rows 40; exec ${[process.execPath, join(ROOT, "bin/siftpack.js"), ...args].map(quote).join(" ")}`;
  const started = Date.now();
  // -q quiet, -f flush at once, -e the command's exit code, -c the command; the typescript file is thrown away.
  const r = spawnSync("script", ["-qfec", cmd, "/dev/null"], { cwd, encoding: "utf8", env: { ...process.env, SIFTPACK_LOG: "info", ...env }, maxBuffer: 64 << 20 });
  if (r.error) throw new Error(`script (util-linux) is needed for this test: ${r.error.message}`);
  return { code: r.status ?? -1, text: r.stdout, ms: Date.now() - started };
}

/** Every progress frame's first line on a captured screen: phase name, number, tasks and percent. */
function frames(text: string): { phase: string; number: number; phases: number; percent: number }[] {
  const re = new RegExp(`phase (\\d+)/(\\d+) (\\S+)  tasks \\d+/\\d+  ${BAR} +(\\d+)%`, "g");
  return [...text.matchAll(re)].map((m) => ({ number: Number(m[1]), phases: Number(m[2]), phase: m[3], percent: Number(m[4]) }));
}

/** What the terminal shows after the last erase: the closing table and stdout. */
const afterLastErase = (text: string) => text.slice(text.lastIndexOf(`${ESC}[J`) + 3);

/** The JSON log lines on a captured screen; on a terminal each follows the erase of the progress lines, on the same row. */
const logLines = (text: string) =>
  text
    .split(/\r?\n/)
    .filter((l) => l.includes('{"level"'))
    .map((l) => l.slice(l.indexOf('{"level"')))
    .map((l) => JSON.parse(l) as { level: number; msg: string; [k: string]: unknown });

describe("run on a terminal", () => {
  it("draws every phase with its bar, erases the lines, and ends with a table of the phases", () => {
    const out = join(tempDir("progress-tty"), "demo");
    const r = onTerminal(["run", "pipelines/demo.yaml", "--out", out, "--no-cache"]);
    expect(r.code, r.text).toBe(0);
    const seen = frames(r.text);
    expect(new Set(seen.map((f) => f.phase)).size, r.text).toBeGreaterThan(1);
    expect(seen.some((f) => f.percent < 100), r.text).toBe(true);
    for (const f of seen) expect(f.number).toBeLessThanOrEqual(f.phases);
    expect(r.text).toMatch(/records [\d,]+( · [\d,]+\/s)? · [\d.]+ s in this phase · [\d.]+ s in all/);
    // Redraws: at most five a second, plus one per log line written above the lines and the final erase.
    const erases = r.text.split(`${ESC}[J`).length - 1;
    expect(logLines(r.text).map((l) => l.msg)).toContain("build complete");
    expect(erases).toBeLessThanOrEqual(2 + Math.ceil((5 * r.ms) / 1000) + logLines(r.text).length);
    const tail = afterLastErase(r.text);
    expect(tail).not.toMatch(/[█░]/);
    expect(tail).toMatch(/^phase +tasks +time +bytes +records +rate\r?\nread +1 +[\d.]+ s +[\d.]+ kB +[\d,]+ +[\d.]+ [kM]?B\/s/);
    expect(tail).toMatch(/^assemble +1 +[\d.]+ s/m);
    expect(tail).toMatch(/^total +\d+ +[\d.]+ s\r?$/m);
    expect(tail).toMatch(/^built .*demo/m);
    // Every phase that was drawn is in the table.
    for (const name of new Set(seen.map((f) => f.phase))) expect(tail).toMatch(new RegExp(`^${name} `, "m"));
  });

  it("with --quiet draws nothing and logs warnings only", () => {
    const out = join(tempDir("progress-quiet"), "demo");
    const r = onTerminal(["run", "pipelines/demo.yaml", "--out", out, "--quiet", "--json"], { SIFTPACK_LOG: "" });
    expect(r.code, r.text).toBe(0);
    expect(r.text).not.toContain(ESC);
    expect(r.text).not.toMatch(/[█░]|^phase|^total/m);
    for (const l of logLines(r.text)) expect(l.level, JSON.stringify(l)).toBeGreaterThanOrEqual(40);
    expect(r.text).toMatch(/"build_hash"/);
  });
});

describe("run on a pipe", () => {
  it("writes JSON lines only; a short build gets no progress line, and its end a line of phase timings", () => {
    const out = join(tempDir("progress-pipe"), "demo");
    const r = siftpack(["run", "pipelines/demo.yaml", "--out", out, "--no-cache"], { env: { SIFTPACK_LOG: "info" } });
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).not.toContain(ESC);
    expect(r.stderr).not.toContain("\r");
    const lines = r.stderr.split("\n").filter(Boolean).map((l) => JSON.parse(l));
    // The build takes a second or two: the first progress line would come after ten.
    expect(lines.filter((l) => l.msg === "progress")).toEqual([]);
    const phases = lines.filter((l) => l.msg === "phases");
    expect(phases).toHaveLength(1);
    const list = phases[0].phases as PhaseTiming[];
    expect(list[0].phase).toBe("read");
    expect(list.at(-1)!.phase).toBe("assemble");
    expect(list[0].bytes).toBeGreaterThan(0);
    for (const t of list) expect(Object.keys(t).sort()).toEqual(["bytes", "phase", "records", "seconds", "tasks"]);
    expect(r.stdout).toMatch(/^built /);
  });

  it("writes progress lines with the phase's real figures (every 50 ms here)", () => {
    const out = join(tempDir("progress-every"), "demo");
    const r = siftpack(["run", "pipelines/demo.yaml", "--out", out, "--no-cache"], { env: { SIFTPACK_LOG: "info", SIFTPACK_PROGRESS_EVERY_MS: "50" } });
    expect(r.code, r.stderr).toBe(0);
    const progress = r.stderr
      .split("\n")
      .filter(Boolean)
      .map((l) => JSON.parse(l))
      .filter((l) => l.msg === "progress")
      .map((l) => l.progress);
    expect(progress.length, r.stderr).toBeGreaterThan(0);
    const keys = ["phase", "phase_number", "phases", "tasks_done", "tasks", "bytes_done", "bytes_total", "records", "bytes_per_second", "records_per_second", "seconds_left"];
    for (const p of progress) {
      expect(Object.keys(p).sort()).toEqual([...keys].sort());
      expect(p.phase_number).toBeGreaterThanOrEqual(1);
      expect(p.phase_number).toBeLessThanOrEqual(p.phases);
      expect(p.tasks_done).toBeLessThanOrEqual(p.tasks);
      expect(p.bytes_done).toBeLessThanOrEqual(p.bytes_total);
    }
    expect(progress.some((p) => p.bytes_total > 0), r.stderr).toBe(true);
  });

  it("with --quiet writes warnings and errors only", () => {
    const out = join(tempDir("progress-quiet-pipe"), "demo");
    const r = siftpack(["run", "pipelines/demo.yaml", "--out", out, "--quiet"], { env: { SIFTPACK_LOG: "", SIFTPACK_PROGRESS_EVERY_MS: "1" } });
    expect(r.code, r.stderr).toBe(0);
    for (const l of r.stderr.split("\n").filter(Boolean)) expect(JSON.parse(l).level, l).toBeGreaterThanOrEqual(40);
    expect(r.stdout).toMatch(/^built /);
  });
});

describe("task", () => {
  it("shows the same display for one task on a terminal", () => {
    const dir = demoCopy();
    const r = onTerminal(["task", "pipelines/demo.yaml", "--phase", "read", "--index", "0", "--no-cache"], {}, dir);
    expect(r.code, r.text).toBe(0);
    expect(frames(r.text).map((f) => f.phase)).toContain("read");
    const tail = afterLastErase(r.text);
    expect(tail).toMatch(/^phase +tasks +time +bytes +records +rate\r?\nread +\d+ +[\d.]+ s/);
    expect(tail).toMatch(/^task 0 of phase read done in [\d.]+ s/m);
  });

  it("with --quiet writes warnings and errors only", () => {
    const dir = demoCopy();
    const r = siftpack(["task", "pipelines/demo.yaml", "--phase", "read", "--index", "0", "--quiet"], { cwd: dir, env: { SIFTPACK_LOG: "" } });
    expect(r.code, r.stderr).toBe(0);
    for (const l of r.stderr.split("\n").filter(Boolean)) expect(JSON.parse(l).level, l).toBeGreaterThanOrEqual(40);
    expect(r.stdout).toMatch(/^task 0 of phase read done in/);
  });
});

// ---- the display on its own, with synthetic progress ----

const PLAN = ["read", "exact-dups", "pass-2", "assemble"];

/** A report for phase `index` of PLAN (or of `phases` phases), with what is done so far. */
function at(index: number, over: Partial<PhaseProgress> = {}, finished: PhaseTiming[] = []): BuildProgress {
  return {
    current: { phase: PLAN[index] ?? `phase-${index}`, index, phases: PLAN.length, tasksDone: 0, tasks: 3, bytesDone: 0, bytesTotal: 3000, records: 0, ...over },
    finished,
  };
}

const percent = (line: string) => Number(/(\d+)%/.exec(line)![1]);

describe("the progress state", () => {
  it("starts every phase's bar below 100 % and ends it at 100 %", () => {
    const s = new ProgressState(0);
    const finished: PhaseTiming[] = [];
    let t = 0;
    for (let i = 0; i < PLAN.length; i++) {
      const total = 1000 * (i + 1);
      s.update(at(i, { bytesTotal: total }, [...finished]), t);
      const [first] = s.frame(t, 120);
      expect(first).toMatch(new RegExp(`^phase ${i + 1}/4 ${PLAN[i]}  tasks 0/3  ${BAR}   0%  0 B / `));
      expect(first).toContain("░");
      expect(percent(first)).toBeLessThan(100);
      for (let k = 1; k <= 3; k++) {
        t += 500;
        s.update(at(i, { bytesTotal: total, bytesDone: (k * total) / 3, tasksDone: k, records: 10 * k }, [...finished]), t);
        const [line] = s.frame(t, 120);
        if (k < 3) expect(percent(line)).toBeLessThan(100);
      }
      finished.push({ phase: PLAN[i], tasks: 3, seconds: 1.5, bytes: total, records: 30 });
      s.update(at(i, { bytesTotal: total, bytesDone: total, tasksDone: 3, records: 30 }, [...finished]), t);
      const [last] = s.frame(t, 120);
      expect(percent(last)).toBe(100);
      expect(last).not.toContain("░");
      expect(last).toContain(`tasks 3/3`);
      expect(last).toMatch(/done in 1\.5 s$/);
      t += 10;
    }
  });

  it("shows a phase that is half read: bytes, rate and the time left the rate gives", () => {
    const s = new ProgressState(0);
    s.update(at(2, { bytesTotal: 4000 }), 1000);
    expect(s.frame(1000, 120)).toMatchInlineSnapshot(`
      [
        "phase 3/4 pass-2  tasks 0/3  ░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░░   0%  0 B / 4.00 kB · time left unknown",
        "records 0 · 0.0 s in this phase · 1.0 s in all",
      ]
    `);
    s.update(at(2, { bytesTotal: 4000, bytesDone: 2000, tasksDone: 1, records: 120 }), 3000);
    // 2000 bytes in 2 s: 1 kB/s, so the 2000 left take 2 s.
    expect(s.frame(3000, 120)).toMatchInlineSnapshot(`
      [
        "phase 3/4 pass-2  tasks 1/3  ████████████████████░░░░░░░░░░░░░░░░░░░░  50%  2.00 kB / 4.00 kB · 1.00 kB/s · 2.0 s left",
        "records 120 · 60/s · 2.0 s in this phase · 3.0 s in all",
      ]
    `);
    expect(s.figures(3000)).toMatchObject({ bytesPerSecond: 1000, recordsPerSecond: 60, secondsLeft: 2 });
    // Nothing more for 2 s: the rate falls and the time left grows, as it would for a stalled phase.
    expect(s.figures(5000)).toMatchObject({ bytesPerSecond: 500, secondsLeft: 4 });
  });

  it("measures the rate over the last five seconds, and afresh in each phase", () => {
    const s = new ProgressState(0);
    // 100 B/s for 10 s, then 1000 B/s
    for (let sec = 0; sec <= 16; sec++) s.update(at(0, { bytesTotal: 100_000, bytesDone: sec <= 10 ? 100 * sec : 1000 + 1000 * (sec - 10) }), 1000 * sec);
    expect(s.figures(16_000)!.bytesPerSecond).toBe(1000);
    expect(s.frame(16_000, 120)[0]).toContain("1.00 kB/s · 1:33 left");
    s.update(at(1, { bytesTotal: 100_000 }), 16_000);
    expect(s.figures(16_000)).toMatchObject({ phase: "exact-dups", bytesPerSecond: undefined, secondsLeft: undefined });
    expect(s.frame(16_000, 120)[0]).toContain("time left unknown");
  });

  it("says when a phase has read everything and is finishing, and falls back on tasks without a byte count", () => {
    const s = new ProgressState(0);
    s.update(at(1, { bytesDone: 3000, tasksDone: 2 }), 0);
    expect(s.frame(500, 120)[0]).toMatch(/100%  3\.00 kB \/ 3\.00 kB · 0 B\/s · all read, finishing$/);
    s.update(at(3, { bytesTotal: 0, tasks: 4, tasksDone: 1 }), 1000);
    expect(s.frame(1000, 120)[0]).toMatch(new RegExp(`^phase 4/4 assemble  tasks 1/4  ${BAR}  25%  time left unknown$`));
  });

  it("never writes a line as wide as the terminal", () => {
    const s = new ProgressState(0);
    s.update(at(1, { phase: "a-rather-long-phase-name", index: 11, phases: 12, tasks: 128, bytesTotal: 4.5e12 }), 0);
    s.update(at(1, { phase: "a-rather-long-phase-name", index: 11, phases: 12, tasks: 128, tasksDone: 17, bytesTotal: 4.5e12, bytesDone: 1.2e12, records: 123_456_789 }), 3_700_000);
    for (const columns of [1, 10, 20, 40, 60, 80, 100, 120, 200]) {
      const lines = s.frame(3_700_000, columns);
      expect(lines).toHaveLength(2);
      for (const l of lines) expect([...l].length, `${columns}: ${l}`).toBeLessThan(Math.max(2, columns));
    }
    // Where the line is short of room the byte rate goes first, then the byte counts; the time left stays.
    const busy = new ProgressState(0);
    const exact = { phase: "exact-dups", index: 11, phases: 12, tasks: 128, bytesTotal: 4.5e12 };
    busy.update(at(1, exact), 0);
    busy.update(at(1, { ...exact, tasksDone: 17, bytesDone: 1.2e12 }), 3_700_000);
    expect([100, 80, 60].map((columns) => busy.frame(3_700_000, columns)[0])).toMatchInlineSnapshot(`
      [
        "phase 12/12 exact-dups  tasks 17/128  ██▉░░░░░░░░  26%  1.20 TB / 4.50 TB · 324 MB/s · 2:49:35 left",
        "phase 12/12 exact-dups  tasks 17/128  █████▉░░░░░░░░░░░░░░░░  26%  2:49:35 left",
        "phase 12/12 exact-dups  tasks 17/128  ██▏░░░░░  26%  2:49:…",
      ]
    `);
  });

  it("closes with a table of every finished phase and the whole build", () => {
    const s = new ProgressState(0);
    const finished: PhaseTiming[] = [
      { phase: "read", tasks: 1, seconds: 12.5, bytes: 250_000_000, records: 1_200_000 },
      { phase: "exact-dups", tasks: 8, seconds: 0.8, bytes: 9_600_000, records: 1_200_000 },
      { phase: "clusters", tasks: 1, seconds: 0.2, bytes: 0, records: 300 },
      { phase: "assemble", tasks: 1, seconds: 95, bytes: 180_000_000, records: 1_150_000 },
    ];
    s.update(at(3, { bytesDone: 3000, tasksDone: 3 }, finished), 110_000);
    expect(s.summary(110_400)).toMatchInlineSnapshot(`
      "phase       tasks    time    bytes    records             rate
      read            1  12.5 s   250 MB  1,200,000        20.0 MB/s
      exact-dups      8   0.8 s  9.60 MB  1,200,000        12.0 MB/s
      clusters        1   0.2 s      0 B        300  1,500 records/s
      assemble        1    1:35   180 MB  1,150,000        1.89 MB/s
      total          11    1:50
      "
    `);
  });
  it("closes a lone task's table with its phase, timed from the reports, when the build sends no timing", () => {
    const s = new ProgressState(0);
    s.update(at(0, { tasks: 1, bytesTotal: 5000 }), 200);
    s.update(at(0, { tasks: 1, bytesTotal: 5000, bytesDone: 5000, records: 40 }), 1200);
    expect(s.summary(1300)).not.toMatch(/^read/m);
    s.update(at(0, { tasks: 1, tasksDone: 1, bytesTotal: 5000, bytesDone: 5000, records: 40 }), 2200);
    expect(s.frame(2200, 120)[0]).toMatch(/100%  5\.00 kB \/ 5\.00 kB · done in 2\.0 s$/);
    expect(s.summary(2300)).toMatchInlineSnapshot(`
      "phase  tasks   time    bytes  records       rate
      read       1  2.0 s  5.00 kB       40  2.50 kB/s
      total      1  2.3 s
      "
    `);
  });
});

describe("the progress display", () => {
  afterEach(() => vi.useRealTimers());

  const collect = () => {
    const writes: string[] = [];
    return { writes, stream: { columns: 100, write: (s: string) => writes.push(s) } };
  };

  it("on a terminal redraws at most five times a second however often the build reports, and ends with the table", () => {
    vi.useFakeTimers();
    const { writes, stream } = collect();
    const d = progressDisplay({ stream: { ...stream, isTTY: true }, level: "silent", env: {} });
    // 10 s of a build reporting every 10 ms: two phases of 5 s
    const finished: PhaseTiming[] = [];
    for (let t = 0; t < 1000; t++) {
      const i = t < 500 ? 0 : 1;
      if (t === 500) finished.push({ phase: "read", tasks: 3, seconds: 5, bytes: 3000, records: 500 });
      d.update(at(i, { bytesDone: (6 * (t % 500)) | 0, records: t % 500 }, [...finished]));
      vi.advanceTimersByTime(10);
    }
    const drawn = writes.filter((w) => w.startsWith("phase "));
    expect(drawn.length).toBeGreaterThanOrEqual(45);
    expect(drawn.length).toBeLessThanOrEqual(51);
    expect(drawn[0]).toMatch(/^phase 1\/4 read  tasks 0\/3 .*   0%/);
    expect(drawn.some((w) => w.startsWith("phase 2/4 exact-dups"))).toBe(true);
    finished.push({ phase: "exact-dups", tasks: 3, seconds: 5, bytes: 3000, records: 500 });
    d.update(at(1, { bytesDone: 3000, tasksDone: 3, records: 500 }, [...finished]));
    d.finish(true);
    expect(writes.at(-2)).toMatch(/\x1b\[J$/);
    expect(writes.at(-1)).toMatchInlineSnapshot(`
      "phase       tasks    time    bytes  records     rate
      read            3   5.0 s  3.00 kB      500  600 B/s
      exact-dups      3   5.0 s  3.00 kB      500  600 B/s
      total           6  10.0 s
      "
    `);
    // Finished: the timer draws no more.
    const n = writes.length;
    vi.advanceTimersByTime(1000);
    expect(writes.length).toBe(n);
  });

  it("on a terminal writes log lines above the progress lines, and after a failure only erases them", () => {
    vi.useFakeTimers();
    const { writes, stream } = collect();
    const d = progressDisplay({ stream: { ...stream, isTTY: true }, level: "info", env: {} });
    d.update(at(0));
    expect(writes).toHaveLength(1);
    d.log.warn({ file: "a.jsonl" }, "a warning");
    // erase, the log line, the lines again
    expect(writes.slice(1).map((w) => w.slice(0, 12))).toEqual(["\r\x1b[1A\x1b[J", '{"level":40,', "phase 1/4 re"]);
    d.finish(false);
    expect(writes.at(-1)).toBe("\r\x1b[1A\x1b[J");
  });

  it("off a terminal writes a progress line every ten seconds, the first after ten, and the phase timings at the end", () => {
    vi.useFakeTimers();
    const { writes, stream } = collect();
    const d = progressDisplay({ stream: { ...stream, isTTY: false }, level: "info", env: {} });
    for (let t = 0; t < 250; t++) {
      d.update(at(0, { bytesTotal: 100_000, bytesDone: 400 * t, records: 2 * t }));
      vi.advanceTimersByTime(100);
    }
    const lines = writes.map((w) => JSON.parse(w));
    expect(lines.map((l) => l.msg)).toEqual(["progress", "progress"]);
    expect(lines[0].time).toBeGreaterThanOrEqual(Date.now() - 25_000 + 10_000);
    // Written by the timer at 10 s, last report at 9.9 s: 19,600 bytes since the report at 5 s make 3,920 B/s
    // over the five seconds to now; 60,400 bytes left take 15.4 s at that rate.
    expect(lines[0].progress).toEqual({
      phase: "read",
      phase_number: 1,
      phases: 4,
      tasks_done: 0,
      tasks: 3,
      bytes_done: 39_600,
      bytes_total: 100_000,
      records: 198,
      bytes_per_second: 3920,
      records_per_second: 20,
      seconds_left: 15.4,
    });
    d.update(at(0, { bytesTotal: 100_000, bytesDone: 100_000, tasksDone: 3, records: 500 }, [{ phase: "read", tasks: 3, seconds: 25, bytes: 100_000, records: 500 }]));
    d.finish(true);
    const end = JSON.parse(writes.at(-1)!);
    expect(end).toMatchObject({ level: 30, msg: "phases", phases: [{ phase: "read", tasks: 3, seconds: 25, bytes: 100_000, records: 500 }] });
    expect(writes.join("")).not.toContain(ESC);
  });

  it("takes SIFTPACK_PROGRESS_EVERY_MS for the period off a terminal", () => {
    vi.useFakeTimers();
    const { writes, stream } = collect();
    const d = progressDisplay({ stream: { ...stream, isTTY: false }, level: "info", env: { SIFTPACK_PROGRESS_EVERY_MS: "500" } });
    d.update(at(0));
    vi.advanceTimersByTime(2100);
    expect(writes.map((w) => JSON.parse(w).msg)).toEqual(["progress", "progress", "progress", "progress"]);
    d.finish(false);
    vi.advanceTimersByTime(2000);
    expect(writes).toHaveLength(4);
  });

  it("with --quiet logs at warn and shows no progress, on a terminal or not, unless SIFTPACK_LOG says otherwise", () => {
    vi.useFakeTimers();
    for (const isTTY of [true, false]) {
      const { writes, stream } = collect();
      const d = progressDisplay({ stream: { ...stream, isTTY }, quiet: true, env: {} });
      for (let t = 0; t < 300; t++) {
        d.update(at(0, { bytesDone: 10 * t }));
        vi.advanceTimersByTime(100);
      }
      d.log.info("an info line");
      d.log.warn("a warning");
      d.update(at(0, { bytesDone: 3000 }, [{ phase: "read", tasks: 3, seconds: 30, bytes: 3000, records: 0 }]));
      d.finish(true);
      expect(writes.map((w) => JSON.parse(w).msg)).toEqual(["a warning"]);
    }
    const { writes, stream } = collect();
    const d = progressDisplay({ stream: { ...stream, isTTY: false }, quiet: true, env: { SIFTPACK_LOG: "info" } });
    d.log.info("asked for");
    d.finish(true);
    expect(writes.map((w) => JSON.parse(w).msg)).toEqual(["asked for"]);
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
