// A whole-stream phase (one task): stages of form `whole` read every unit's records in order in one
// instance; their output goes back out per unit. A record's unit is found from its file and its
// row (`seq`, fixed file-wide after the read phase), so every part of a file gets its own records
// back. Drops are held per unit until the end, since a two-pass stage drops records of early units
// after reading late ones.
import { mkdir } from "node:fs/promises";
import { join } from "node:path";
import { STAGES } from "../stages/index.js";
import type { StageEntry } from "../pipeline/config.js";
import { SiftpackError } from "../errors.js";
import { FrameWriter } from "../cache/record-events.js";
import type { DocRecord, StageContext } from "../types.js";
import { TallyWriter, talliesHere } from "./mixture-tally.js";
import { dropsFile, recordsBefore, unitFixes, UnitOutput, type TaskEnv } from "./unit-io.js";
import { writeAtomic } from "./workdir.js";
import { crashPoint } from "../lib/crash-point.js";

/** Finds a record's unit from (source, file, row): each file's units with the first row of each. */
function unitFinder(env: TaskEnv): (r: DocRecord) => number {
  const byFile = new Map<string, { u: number; firstRow: number }[]>();
  const fixes = unitFixes(env);
  for (const unit of env.units) {
    const key = `${unit.source.name}\u0000${unit.path}`;
    let l = byFile.get(key);
    if (!l) byFile.set(key, (l = []));
    l.push({ u: unit.u, firstRow: fixes[unit.u].rows });
  }
  return (r) => {
    const l = byFile.get(`${r.source}\u0000${r.origin.file}`);
    if (!l) throw new SiftpackError("SP_STAGE", `a stage produced record "${r.id}" of ${r.origin.file}, which is no input of source ${r.source}`);
    let k = l.length - 1;
    while (k > 0 && l[k].firstRow > r.seq) k--;
    return l[k].u;
  };
}

export async function wholePhase(env: TaskEnv, entries: StageEntry[], count: (name: string, n?: number) => void): Promise<{ files: string[]; records: Map<number, number> }> {
  const work = env.plan.workDir;
  const name = env.phase.name;
  const filesDir = join(work, name, "files");
  await mkdir(filesDir, { recursive: true });
  const unitOf = unitFinder(env);
  const drops = new Map<number, FrameWriter>();
  const files: string[] = [];
  const ctx: StageContext = {
    seed: env.p.config.seed,
    log: env.log,
    workDir: filesDir,
    addOutputFile: (rel) => files.push(rel),
    count,
    drop: (r, reason, detail) => {
      const u = unitOf(r);
      let w = drops.get(u);
      if (!w) drops.set(u, (w = new FrameWriter()));
      w.drop(r, reason, detail);
    },
  };
  async function* all(): AsyncGenerator<DocRecord> {
    for (const unit of env.units) yield* recordsBefore(env, env.phase.index, unit.u, ctx);
  }
  let stream: AsyncIterable<DocRecord> = all();
  for (const e of entries) stream = (await STAGES[e.name].create(e.options, { baseDir: env.p.baseDir, workers: env.threads }))(stream, ctx);
  // Records come out in input order; each unit's output is opened when its first record arrives.
  const records = new Map<number, number>();
  let current: { u: number; out: UnitOutput; tally?: TallyWriter } | undefined;
  let next = 0;
  // When packing reads this phase's records, each unit's train figures for the mixture are gathered here.
  const tallies = talliesHere(env);
  const openUpTo = async (u: number) => {
    if (current) {
      await current.tally?.write(work, name, current.u);
      await current.out.commit();
      records.set(current.u, current.out.records);
      current = undefined;
    }
    for (; next < u; next++) {
      const empty = await UnitOutput.open(work, name, next);
      if (tallies) await new TallyWriter(env.p.config.seed).write(work, name, next);
      await empty.commit();
      records.set(next, 0);
    }
  };
  try {
    for await (const r of stream) {
      const u = unitOf(r);
      if (!current || current.u !== u) {
        if (u < next) throw new SiftpackError("SP_STAGE", `stage output is out of input order: record "${r.id}" of ${r.origin.file} came after records of later files`);
        await openUpTo(u);
        current = { u, out: await UnitOutput.open(work, name, u), tally: tallies ? new TallyWriter(env.p.config.seed) : undefined };
        next = u + 1;
      }
      crashPoint("whole");
      current.tally?.add(r);
      await current.out.add(r);
    }
    await openUpTo(env.units.length);
  } catch (err) {
    await current?.out.abort();
    throw err;
  }
  // The per-unit outputs opened a drops file each; the drops gathered here replace them.
  for (const unit of env.units) await writeAtomic(dropsFile(work, name, unit.u), drops.get(unit.u)?.take() ?? "");
  return { files, records };
}
