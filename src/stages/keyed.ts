// The keyed form of a stage: each unit's records emit keyed material, partition steps decide per
// partition of keys (an optional resolve step joins what they found), and the next reader of the
// records applies the decisions. Exact dedup, MinHash near-duplicates and repeated lines are
// instances; a library stage may be one too (README, "Using it as a library").
//
// One implementation serves both ways a stage runs: the build engine places the steps in phases of
// independent tasks over its work directory, and `keyedStage` runs the same steps in one process over
// a temporary directory (one unit, one partition) when the stage is used as a plain stream. The
// steps see only the files below, so the two differ in how many units and partitions there are.
//
// Files (names are the stage's own; a file never written reads as empty):
//   collect:   <collect>/keyed/<name>/<partition>/<unit>    and  <collect>/keyed/<name>/own/<unit>
//   partition: <partition>/shared/<name>/<partition>        and  <partition>/decisions/<partition>/<unit>.jsonl
//   resolve:   <resolve>/shared/<name>, <resolve>/files/<build file>, <resolve>/decisions/<unit>.jsonl
import { mkdtemp, mkdir, readdir, readFile, rm, stat, copyFile } from "node:fs/promises";
import { tmpdir } from "node:os";
import { closeSync, existsSync, openSync, readSync } from "node:fs";
import { join } from "node:path";
import type { DocRecord, Logger, StageContext } from "../types.js";
import type { Stage } from "./stage.js";
import { AtomicStream, writeAtomic } from "../lib/work-files.js";
import { freeName } from "../lib/numbered-name.js";
import { FrameWriter, readEvents } from "../cache/record-events.js";
import { jsonLines } from "../lib/json-lines.js";

export interface Writer {
  write(data: string | Uint8Array): Promise<void>;
}

/** What a collector may use: the seed, the pipeline's directory, threads, counters and the log. */
export interface KeyedEnv {
  seed: number;
  baseDir: string;
  threads: number;
  log: Logger;
  count(name: string, n?: number): void;
}

/** Where one unit's collector writes: per partition of keys, or files of the unit's own. */
export interface CollectOutput {
  readonly partitions: number;
  part(name: string, p: number): Writer;
  /** A file of the unit's own, which the steps read whole or by position (signatures, texts). */
  own(name: string): Writer;
}

export interface UnitCollector {
  /** Records arrive in input order; `r.seq` (the row in its file) names the record in decisions. */
  add(r: DocRecord): void | Promise<void>;
  finish(): Promise<void>;
}

/** Made once per task (threads, tables), then one collector per unit. */
export interface Collectors {
  unit(u: number, out: CollectOutput): Promise<UnitCollector>;
  close(): Promise<void>;
}

/** The read side: what the collectors and the steps before wrote. */
export interface KeyedFiles {
  /** Units in build order, and partitions of keys. */
  readonly units: number;
  readonly partitions: number;
  read(name: string, u: number, p?: number): Promise<Buffer>;
  lines(name: string, u: number, p?: number): AsyncIterable<string>;
  /** For positioned reads; the file may not exist (nothing was written). */
  path(name: string, u: number, p?: number): string;
  size(name: string, u: number, p?: number): Promise<number>;
  /** What partition step `p` (or the resolve step, p undefined) shared under `name`. */
  shared(name: string, p?: number): Promise<Buffer>;
}

export interface StepContext {
  seed: number;
  baseDir: string;
  log: Logger;
  count(name: string, n?: number): void;
  /** Scratch space for spills; removed after the step. */
  tmpDir: string;
}

export interface StepOutput {
  /** The decision (a JSON value the applier reads) about row `i` of unit `u`; one per record at most. */
  decide(u: number, i: number, decision: unknown): void;
  share(name: string, data: string | Uint8Array): Promise<void>;
  /** Resolve only: the path of a build file (listed in the manifest) to write. */
  buildFile(name: string): string;
}

/** Applies a record's decision (undefined when it has none); returns the record, or undefined after `ctx.drop`. */
export type Apply = (r: DocRecord, decision: unknown, ctx: StageContext) => DocRecord | undefined;

export interface KeyedForm<O = any> {
  kind: "keyed";
  /** Phase names: the partition step's and, when there is one, the resolve step's. */
  steps: { partition: string; resolve?: string };
  collectors(o: O, env: KeyedEnv): Promise<Collectors>;
  partition(o: O, p: number, files: KeyedFiles, out: StepOutput, ctx: StepContext): Promise<void>;
  resolve?(o: O, files: KeyedFiles, out: StepOutput, ctx: StepContext): Promise<void>;
  /** Prepared once per task that reads the records after the steps. */
  applier(o: O, files: KeyedFiles, ctx: StepContext): Promise<Apply>;
}

const pad = (n: number, w: number) => String(n).padStart(w, "0");
const partName = (p: number) => pad(p, 5);
const unitName = (u: number) => pad(u, 6);

/** The directories of one keyed stage's steps. */
export class KeyedDirs implements KeyedFiles {
  constructor(
    readonly collect: string,
    readonly partitionDir: string,
    readonly resolveDir: string | undefined,
    readonly units: number,
    readonly partitions: number,
  ) {}

  path(name: string, u: number, p?: number): string {
    return join(this.collect, "keyed", name, p === undefined ? "own" : partName(p), unitName(u));
  }

  async read(name: string, u: number, p?: number): Promise<Buffer> {
    return readFile(this.path(name, u, p)).catch(absent);
  }

  async *lines(name: string, u: number, p?: number): AsyncIterable<string> {
    const path = this.path(name, u, p);
    if ((await stat(path).catch(() => undefined)) === undefined) return;
    yield* jsonLines(path);
  }

  async size(name: string, u: number, p?: number): Promise<number> {
    return (await stat(this.path(name, u, p)).catch(() => ({ size: 0 }))).size;
  }

  sharedPath(name: string, p?: number): string {
    if (p !== undefined) return join(this.partitionDir, "shared", name, partName(p));
    if (!this.resolveDir) throw new Error(`keyed stage: "${name}" is shared by a resolve step this stage does not have`);
    return join(this.resolveDir, "shared", name);
  }

  async shared(name: string, p?: number): Promise<Buffer> {
    return readFile(this.sharedPath(name, p)).catch(absent);
  }

  decisionsPath(u: number, p?: number): string {
    return p === undefined ? join(this.resolveDir!, "decisions", `${unitName(u)}.jsonl`) : join(this.partitionDir, "decisions", partName(p), `${unitName(u)}.jsonl`);
  }

  /** The files that may hold decisions about unit u (one per partition, and the resolve step's). */
  decisionPaths(u: number): string[] {
    const paths = Array.from({ length: this.partitions }, (_, p) => this.decisionsPath(u, p));
    if (this.resolveDir) paths.push(this.decisionsPath(u));
    return paths;
  }

  /** Every decision about unit u's records, by row. */
  async decisions(u: number): Promise<Map<number, unknown>> {
    const m = new Map<number, unknown>();
    for (const path of this.decisionPaths(u)) {
      if ((await stat(path).catch(() => undefined)) === undefined) continue;
      for await (const line of jsonLines(path)) {
        const d = JSON.parse(line) as { i: number; d: unknown };
        m.set(d.i, d.d);
      }
    }
    return m;
  }
}

function absent(err: NodeJS.ErrnoException): Buffer {
  if (err.code === "ENOENT") return Buffer.alloc(0);
  throw err;
}

/**
 * The collectors of a keyed form whose material is one JSON line per record, written into the
 * partition its `hash` picks (hash modulo partitions); `lineOf` returning undefined skips the record.
 */
export function jsonLineCollectors(file: string, lineOf: (r: DocRecord) => { hash: number; line: object } | undefined, prepare: () => Promise<unknown> = async () => undefined): () => Promise<Collectors> {
  return async () => {
    await prepare();
    return {
      async unit(_u, out) {
        return {
          add(r) {
            const x = lineOf(r);
            if (x) return out.part(file, x.hash % out.partitions).write(JSON.stringify(x.line) + "\n");
          },
          async finish() {},
        };
      },
      async close() {},
    };
  };
}

/** Positioned reads of one own file per unit (a descriptor per unit, opened on first use): signatures, texts. */
export class OwnFileReader {
  private readonly fds = new Map<number, number>();
  constructor(
    private readonly files: KeyedFiles,
    private readonly name: string,
  ) {}

  /** Fills `into` with the bytes of unit u's file from byte `at`. */
  read(u: number, at: number, into: Uint8Array): Uint8Array {
    let fd = this.fds.get(u);
    if (fd === undefined) this.fds.set(u, (fd = openSync(this.files.path(this.name, u), "r")));
    let got = 0;
    while (got < into.length) {
      const n = readSync(fd, into, got, into.length - got, at + got);
      if (n === 0) throw new Error(`${this.name} of unit ${u} ends early`);
      got += n;
    }
    return into;
  }

  close(): void {
    for (const fd of this.fds.values()) closeSync(fd);
    this.fds.clear();
  }
}

/** Where collectors under `collectDir` may have written for unit u: one path per file name and partition (or own) seen there. */
export async function collectedPaths(collectDir: string, u: number): Promise<string[]> {
  const root = join(collectDir, "keyed");
  const paths: string[] = [];
  for (const name of await readdir(root).catch(() => [] as string[])) for (const sub of await readdir(join(root, name)).catch(() => [] as string[])) paths.push(join(root, name, sub, unitName(u)));
  return paths.sort();
}

/** Collects one unit: removes what an earlier attempt left for it, then files appear as the collector finishes. */
export async function collectUnit(dirs: KeyedDirs, collectors: Collectors, u: number): Promise<{ add(r: DocRecord): void | Promise<void>; finish(): Promise<void>; abort(): Promise<void> }> {
  for (const path of await collectedPaths(dirs.collect, u)) await rm(path, { force: true });
  const open = new Map<string, AtomicStream>();
  const writer = (path: string): Writer => ({
    async write(data) {
      let s = open.get(path);
      if (!s) open.set(path, (s = await AtomicStream.open(path)));
      await s.write(data);
    },
  });
  const out: CollectOutput = { partitions: dirs.partitions, part: (name, p) => writer(dirs.path(name, u, p)), own: (name) => writer(dirs.path(name, u)) };
  const c = await collectors.unit(u, out);
  return {
    add: (r) => c.add(r),
    async finish() {
      await c.finish();
      for (const s of open.values()) await s.commit();
    },
    async abort() {
      for (const s of open.values()) await s.abort();
    },
  };
}

/** Decisions buffered per unit, written (sorted by row) when the step ends. */
class Decisions {
  private readonly byUnit = new Map<number, { i: number; d: unknown }[]>();
  add(u: number, i: number, d: unknown): void {
    let l = this.byUnit.get(u);
    if (!l) this.byUnit.set(u, (l = []));
    l.push({ i, d });
  }
  async write(pathOf: (u: number) => string): Promise<void> {
    for (const [u, l] of this.byUnit) {
      l.sort((a, b) => a.i - b.i);
      await writeAtomic(pathOf(u), l.map((x) => JSON.stringify(x) + "\n").join(""));
    }
  }
}

async function step(dirs: KeyedDirs, dir: string, p: number | undefined, ctx: Omit<StepContext, "tmpDir">, run: (out: StepOutput, c: StepContext) => Promise<void>): Promise<string[]> {
  // A rerun starts clean: decisions of an earlier attempt (or plan) must not linger.
  await rm(p === undefined ? join(dir, "decisions") : join(dir, "decisions", partName(p)), { recursive: true, force: true });
  await mkdir(dir, { recursive: true });
  const tmp = await mkdtemp(join(dir, `.step-${p ?? "r"}-`));
  const decisions = new Decisions();
  const files: string[] = [];
  try {
    await run(
      {
        decide: (u, i, d) => decisions.add(u, i, d),
        share: (name, data) => writeAtomic(dirs.sharedPath(name, p), data),
        buildFile: (name) => {
          if (p !== undefined) throw new Error("keyed stage: build files are written by the resolve step");
          files.push(name);
          return join(dir, "files", name);
        },
      },
      { ...ctx, tmpDir: tmp },
    );
    if (files.length) await mkdir(join(dir, "files"), { recursive: true });
    await decisions.write((u) => dirs.decisionsPath(u, p));
  } finally {
    await rm(tmp, { recursive: true, force: true });
  }
  return files;
}

/** Partition step p: decisions and shared results of the keys in partition p. */
export function partitionStep<O>(form: KeyedForm<O>, o: O, dirs: KeyedDirs, p: number, ctx: Omit<StepContext, "tmpDir">): Promise<string[]> {
  return step(dirs, dirs.partitionDir, p, ctx, (out, c) => form.partition(o, p, dirs, out, c));
}

/** The resolve step (when the form has one); returns the build files it wrote (under <resolve>/files/). */
export async function resolveStep<O>(form: KeyedForm<O>, o: O, dirs: KeyedDirs, ctx: Omit<StepContext, "tmpDir">): Promise<string[]> {
  if (!form.resolve || !dirs.resolveDir) return [];
  // mkdir before writing build files: the step creates files/ only when it wrote one.
  await mkdir(join(dirs.resolveDir, "files"), { recursive: true });
  return step(dirs, dirs.resolveDir, undefined, ctx, (out, c) => form.resolve!(o, dirs, out, c));
}

/** Reads unit u's records after the steps: their decisions applied. */
export async function keyedApplier<O>(form: KeyedForm<O>, o: O, dirs: KeyedDirs, ctx: Omit<StepContext, "tmpDir">): Promise<(u: number) => Promise<(r: DocRecord, sc: StageContext) => DocRecord | undefined>> {
  const tmp = await mkdtemp(join(tmpdir(), "siftpack-apply-"));
  let apply: Apply;
  try {
    apply = await form.applier(o, dirs, { ...ctx, tmpDir: tmp });
  } finally {
    await rm(tmp, { recursive: true, force: true });
  }
  return async (u) => {
    const decisions = await dirs.decisions(u);
    return (r, sc) => apply(r, decisions.get(r.seq), sc);
  };
}

/**
 * The keyed form as a plain stream stage: the input is one unit and one partition, its records
 * kept in a temporary file while the steps run, then read back in order with the decisions applied.
 * Build files land in `ctx.workDir`. `baseDir` is the pipeline's directory, against which a stage
 * resolves the paths in its options (default: the work directory, as before).
 */
export function keyedStage<O>(form: KeyedForm<O>, o: O, threads: number, baseDir?: string): Stage {
  return async function* keyed(input, ctx) {
    const base = ctx.workDir || tmpdir();
    await mkdir(base, { recursive: true });
    const dir = await mkdtemp(join(base, ".keyed-"));
    try {
      const dirs = new KeyedDirs(join(dir, "collect"), join(dir, "partition"), form.resolve ? join(dir, "resolve") : undefined, 1, 1);
      const env: KeyedEnv = { seed: ctx.seed, baseDir: baseDir ?? base, threads, log: ctx.log, count: ctx.count };
      const collectors = await form.collectors(o, env);
      const spill = await AtomicStream.open(join(dir, "records.bin"));
      try {
        const unit = await collectUnit(dirs, collectors, 0);
        const frames = new FrameWriter();
        for await (const r of input) {
          await unit.add(r);
          frames.rec(r);
          if (frames.length >= 1 << 20) await spill.write(frames.take());
        }
        await spill.write(frames.take());
        await unit.finish();
        await spill.commit();
      } finally {
        await collectors.close();
      }
      const sc = { seed: ctx.seed, baseDir: baseDir ?? base, log: ctx.log, count: ctx.count };
      await partitionStep(form, o, dirs, 0, sc);
      for (const f of await resolveStep(form, o, dirs, sc)) {
        // A stage used twice in one directory writes clusters.jsonl, then clusters-2.jsonl, …
        const name = freeName(f, (c) => existsSync(join(base, c)));
        await copyFile(join(dirs.resolveDir!, "files", f), join(base, name));
        ctx.addOutputFile(name);
      }
      const apply = await (await keyedApplier(form, o, dirs, sc))(0);
      for await (const e of readEvents(join(dir, "records.bin"))) {
        if (e.k !== "rec") continue;
        const r = apply(e.r, ctx);
        if (r) yield r;
      }
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  };
}
