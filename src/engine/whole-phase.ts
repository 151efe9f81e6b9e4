// A whole-stream phase (one task): stages that need every record in one instance read all input
// files' records in order; their output goes back out per file. Drops are held per file until the
// end, since a two-pass stage drops records of early files after reading late ones.
import { mkdir } from "node:fs/promises";
import { join } from "node:path";
import { STAGES } from "../stages/index.js";
import { createTokenize, type TokenizeOptions } from "../stages/tokenize.js";
import type { StageEntry } from "../pipeline/config.js";
import { SiftpackError } from "../errors.js";
import { dropEvent } from "../cache/record-events.js";
import type { DocRecord, StageContext } from "../types.js";
import { dropsFile, recordsBefore, UnitOutput, type TaskEnv } from "./unit-io.js";
import { writeAtomic } from "./workdir.js";

export async function wholePhase(env: TaskEnv, entries: StageEntry[], count: (name: string, n?: number) => void): Promise<{ files: string[]; records: Map<number, number> }> {
  const work = env.plan.workDir;
  const name = env.phase.name;
  const filesDir = join(work, name, "files");
  await mkdir(filesDir, { recursive: true });
  const unitByFile = new Map(env.units.map((u) => [`${u.source.name}\u0000${u.path}`, u.u]));
  const unitOf = (r: DocRecord) => {
    const u = unitByFile.get(`${r.source}\u0000${r.origin.file}`);
    if (u === undefined) throw new SiftpackError("SP_STAGE", `a stage produced record "${r.id}" of ${r.origin.file}, which is no input of source ${r.source}`);
    return u;
  };
  const drops = new Map<number, string[]>();
  const files: string[] = [];
  const ctx: StageContext = {
    seed: env.p.config.seed,
    log: env.log,
    workDir: filesDir,
    addOutputFile: (rel) => files.push(rel),
    count,
    drop: (r, reason, detail) => {
      const u = unitOf(r);
      let l = drops.get(u);
      if (!l) drops.set(u, (l = []));
      l.push(JSON.stringify(dropEvent(r, reason, detail)) + "\n");
    },
  };
  async function* all(): AsyncGenerator<DocRecord> {
    for (const unit of env.units) yield* recordsBefore(env, env.phase.index, unit.u, ctx.drop, count);
  }
  let stream: AsyncIterable<DocRecord> = all();
  for (const e of entries) {
    if (e.name === "tokenize") stream = createTokenize(e.options as TokenizeOptions, { baseDir: env.p.baseDir, workers: env.threads }).stage(stream, ctx);
    else stream = (await STAGES[e.name].create(e.options, { baseDir: env.p.baseDir, workers: env.threads }))(stream, ctx);
  }
  // Records come out in input order; each file's output is opened when its first record arrives.
  const records = new Map<number, number>();
  let current: { u: number; out: UnitOutput } | undefined;
  let next = 0;
  const openUpTo = async (u: number) => {
    if (current) {
      await current.out.commit();
      records.set(current.u, current.out.records);
      current = undefined;
    }
    for (; next < u; next++) {
      const empty = await UnitOutput.open(work, name, next);
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
        current = { u, out: await UnitOutput.open(work, name, u) };
        next = u + 1;
      }
      await current.out.add(r);
    }
    await openUpTo(env.units.length);
  } catch (err) {
    await current?.out.abort();
    throw err;
  }
  // The per-file outputs opened a drops file each; the drops gathered here replace them.
  for (const unit of env.units) await writeAtomic(dropsFile(work, name, unit.u), (drops.get(unit.u) ?? []).join(""));
  return { files, records };
}
