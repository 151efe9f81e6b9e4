// The assemble phase (one task): every input file's fates merged in row order into the ledger, the
// kept records packed per split into blocks (shuffled where asked), the analyzers run, stage files
// copied in, the manifest written, and the build published in one rename.
import { copyFile, readFile } from "node:fs/promises";
import { join } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import { createPacker, type Packer } from "../stages/pack.js";
import { outputSettings } from "../stages/output-settings.js";
import { formOf } from "../stages/stage.js";
import { TRAINED_FILE } from "../tokenizer/index.js";
import { readEvents, type UnitEvent } from "../cache/record-events.js";
import { crashPoint } from "../lib/crash-point.js";
import { copiesFor } from "./weights.js";
import { Ledger } from "../output/ledger.js";
import { ShardWriter, type Emit } from "../output/shard-writer.js";
import { prepareStaging, publishStaging } from "../output/output-dir.js";
import { writeManifest, type Manifest } from "../output/manifest.js";
import { writeBuildInfo } from "../output/build-info.js";
import { ANALYZERS, type Analyzer } from "../analysis/analyzer.js";
import type { DocRecord } from "../types.js";
import type { QuarantineEntry } from "../sources/source.js";
import { dropsFile, fixFromRead, unitFixes, recordsBefore, summaryFile, unitsFile, type TaskEnv } from "./unit-io.js";
import type { StageContext } from "../types.js";
import { STAGES } from "../stages/index.js";
import type { TaskDone } from "./workdir.js";

type Fate = { i: number; bad?: QuarantineEntry; drop?: { r: DocRecord; reason: string; detail?: Record<string, unknown> } };

export async function assemblePhase(env: TaskEnv): Promise<Manifest> {
  const { p, plan } = env;
  const { config } = p;
  const startedAt = new Date();
  const work = plan.workDir;
  const allDone = [...env.done.values()].flat();
  const readDone = env.done.get("read")!;
  const facts = new Map<number, TaskDone["units"][string]>();
  for (const d of readDone) for (const [u, f] of Object.entries(d.units)) facts.set(Number(u), f);
  // One entry per input file (a file read in parts is hashed whole by its first part).
  const inputs: Manifest["inputs"] = env.units.filter((u) => !u.range || u.range.start === 0).map((u) => ({ source: u.source.name, path: u.path, size: facts.get(u.u)!.size!, xxh64: facts.get(u.u)!.xxh64! }));

  const staging = await prepareStaging(p.outDir);
  const ledger = new Ledger(join(staging, "ledger.jsonl.gz"), join(staging, "quarantine.jsonl"));
  const out = outputSettings(config.stages, p.baseDir);
  const packOpts = out.pack;
  const { tokenDtype, segmentDtype } = out;

  // Stage files in phase order, then the counters of every task.
  const stageFiles: string[] = [];
  let trainedPath: string | undefined;
  for (const ph of plan.phases) {
    for (const d of env.done.get(ph.name) ?? []) {
      for (const f of d.files) {
        // A stage used twice writes its file twice: the later ones get -2, -3 … before the extension.
        let name = f;
        for (let n = 2; stageFiles.includes(name); n++) name = f.replace(/(\.[^.]*)?$/, (ext) => `-${n}${ext}`);
        await copyFile(join(work, ph.name, "files", f), join(staging, name));
        stageFiles.push(name);
        if (f === TRAINED_FILE) trainedPath = join(staging, f);
      }
    }
  }
  const stageCounts: Record<string, number> = {};
  const count = (name: string, n = 1) => (stageCounts[name] = (stageCounts[name] ?? 0) + n);
  for (const d of allDone) for (const [k, n] of Object.entries(d.counts)) count(k, n);
  // Stages of form `unit` hand their whole-stream checks to `gather`, with every unit's summary in input order.
  for (const ph of plan.phases) {
    if (ph.does.kind !== "pass") continue;
    for (const [k, e] of ph.does.entries.entries()) {
      const f = formOf(STAGES[e.name], e.options);
      if (f.kind !== "unit") continue;
      const summaries: unknown[] = [];
      for (const unit of env.units) {
        const list = JSON.parse(await readFile(summaryFile(work, ph.name, unit.u), "utf8")) as unknown[];
        if (list[k] !== undefined && list[k] !== null) summaries.push(list[k]);
      }
      await f.gather(summaries, e.options, { seed: config.seed, baseDir: p.baseDir, log: env.log, count, workDir: staging, addOutputFile: (f) => stageFiles.push(f) });
    }
  }

  const weights = new Map(config.sources.map((s) => [s.name, s.weight]));
  const copiesOf = (r: DocRecord) => {
    const w = weights.get(r.source) ?? 1;
    return w === 1 ? 1 : copiesFor(w, `${r.source}\u0000${r.id}`, config.seed);
  };

  const analyzers: { key: string; analyzer: Analyzer }[] = [];
  for (const f of ANALYZERS) {
    const analyzer = await f.create({ config, workDir: staging, baseDir: p.baseDir, workers: env.threads, log: env.log });
    if (analyzer) analyzers.push({ key: f.key, analyzer });
  }
  const writers = new Map<string, { writer: ShardWriter; packer: Packer }>();
  const writerFor = (split: string) => {
    let w = writers.get(split);
    if (!w) {
      const writer = new ShardWriter({ outDir: staging, split, length: packOpts.length, shardBlocks: config.output.shard_blocks, tokenDtype, segmentDtype, emit: packOpts.emit as Emit[] });
      const packer = createPacker(packOpts, out.eosId, (t, s) => writer.addRow(t, s), { seed: config.seed, split });
      w = { writer, packer };
      writers.set(split, w);
    }
    return w;
  };

  const k = env.phase.index;
  // Explicit ids must be unique across a source's files (each file checked its own while reading).
  const multiFile = new Set(config.sources.filter((s) => s.id !== undefined && env.units.filter((u) => u.source.name === s.name).length > 1).map((s) => s.name));
  const seenIds = new Set<string>();
  try {
    for (const unit of env.units) {
      const fates: Fate[] = [];
      const fix = unitFixes(env)[unit.u];
      for await (const e of readEvents(unitsFile(work, "read", unit.u))) {
        if (e.k === "bad") fates.push({ i: e.i + fix.rows, bad: { ...e.entry, line: e.entry.line + fix.lines } });
        else if (e.k === "drop") {
          const d = dropOf(e);
          fixFromRead(env, unit.u, d.r);
          fates.push({ i: d.r.seq, drop: d });
        }
      }
      for (const ph of plan.phases.slice(1, k)) {
        if (ph.does.kind !== "pass" && ph.does.kind !== "whole") continue;
        for await (const e of readEvents(dropsFile(work, ph.name, unit.u))) if (e.k === "drop") fates.push({ i: e.i, drop: dropOf(e) });
      }
      // Drops made while reading (decisions applied now), in row order as the records come.
      const late: Fate[] = [];
      const ctx: StageContext = { seed: config.seed, log: env.log, workDir: staging, addOutputFile: () => {}, count, drop: (r, reason, detail) => late.push({ i: r.seq, drop: { r, reason, detail } }) };
      const records = recordsBefore(env, k, unit.u, ctx);
      const unitIds: string[] = [];
      const emit = async (f: Fate | { i: number; rec: DocRecord }) => {
        if ("rec" in f || f.drop) {
          const r = "rec" in f ? f.rec : f.drop!.r;
          if (multiFile.has(r.source)) {
            if (seenIds.has(`${r.source}\u0000${r.id}`)) {
              await ledger.quarantined({ source: r.source, file: r.origin.file, line: r.origin.line, error: `duplicate id "${r.id}" (also in an earlier file of the source)` });
              return;
            }
            unitIds.push(`${r.source}\u0000${r.id}`);
          }
          if ("rec" in f) await keep(f.rec);
          else ledger.dropped(r, f.drop!.reason, f.drop!.detail);
        } else await ledger.quarantined(f.bad!);
        await ledger.flush();
      };
      const keep = async (r: DocRecord) => {
        const split = r.split ?? "train";
        // Repetition serves the training mixture only; held-out text is seen once.
        const n = split === "train" ? copiesOf(r) : 1;
        crashPoint("records");
        ledger.kept(r, n !== 1 ? { copies: n } : {});
        const { writer, packer } = writerFor(split);
        for (let c = 0; c < n; c++) packer.add(r.tokens!);
        for (const a of analyzers) await a.analyzer.add(r);
        if (writer.pending > 0) await writer.writePending();
      };
      fates.sort((a, b) => a.i - b.i);
      let at = 0;
      for await (const r of records) {
        while (at < fates.length && fates[at].i < r.seq) await emit(fates[at++]);
        while (late.length > 0 && late[0].i < r.seq) await emit(late.shift()!);
        await emit({ i: r.seq, rec: r });
      }
      const rest = [...fates.slice(at), ...late].sort((a, b) => a.i - b.i);
      for (const f of rest) await emit(f);
      for (const id of unitIds) seenIds.add(id);
    }
    for (const { writer, packer } of writers.values()) {
      packer.finish();
      await writer.finish();
      Object.assign(writer.stats, packer.stats);
    }
    await ledger.close();
  } catch (err) {
    for (const a of analyzers) await a.analyzer.close?.().catch(() => {});
    if (err instanceof SiftpackError) throw err;
    const code = (err as NodeJS.ErrnoException)?.code;
    if (typeof code === "string" && /^E[A-Z]+$/.test(code)) throw new SiftpackError("SP_OUTPUT", `writing ${staging} failed: ${describeSystemError(err)}`, { cause: err });
    throw err;
  }

  const c = ledger.counts;
  if (c.read > 0 && c.quarantined / c.read > config.max_bad_fraction) {
    for (const a of analyzers) await a.analyzer.close?.().catch(() => {});
    throw new SiftpackError(
      "SP_BAD_FRACTION",
      `${c.quarantined} of ${c.read} input records (${((100 * c.quarantined) / c.read).toFixed(1)} %) were quarantined, more than max_bad_fraction ${config.max_bad_fraction}; see ${join(staging, "quarantine.jsonl")}`,
    );
  }
  const analysis: Record<string, unknown> = { stage_counts: Object.fromEntries(Object.entries(stageCounts).sort(([a], [b]) => (a < b ? -1 : 1))) };
  for (const a of analyzers) analysis[a.key] = await a.analyzer.finish();

  const splitOrder = ["train", "val", "test"];
  const splits = [...writers.keys()].sort((a, b) => splitOrder.indexOf(a) - splitOrder.indexOf(b));
  const encoder = out.encoder(trainedPath ? await readFile(trainedPath, "utf8") : undefined);
  const manifest = await writeManifest(staging, {
    pipeline: p,
    inputs,
    encoder,
    bos: out.bos,
    eos: out.eos,
    length: packOpts.length,
    strategy: packOpts.strategy,
    tokenDtype,
    segmentDtype,
    splits: Object.fromEntries(splits.map((s) => [s, writers.get(s)!.writer.stats])),
    counts: c,
    files: splits.flatMap((s) => writers.get(s)!.writer.files),
    extraFiles: stageFiles,
    analysis,
  });
  await writeBuildInfo(staging, p, startedAt);
  await publishStaging(staging, p.outDir);
  env.log.info({ outDir: p.outDir, records: c.read, kept: c.kept }, "build complete");
  return manifest;
}

function dropOf(e: Extract<UnitEvent, { k: "drop" }>): { r: DocRecord; reason: string; detail?: Record<string, unknown> } {
  return { r: { id: e.id, source: e.source, text: "", meta: {}, origin: { file: e.file, line: e.line }, seq: e.i }, reason: e.reason, detail: e.detail };
}
