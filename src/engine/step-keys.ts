// The keys of the steps kept in the cache (step-memo.ts), and the files each step leaves. A unit
// file's fingerprint is the key of the step that wrote it (the read phase's: the cache key of the
// input's bytes), so keys chain back to the inputs; a decision's part of a key is the bytes of the
// decision files about the unit and of whatever the stage's applier read, so a change anywhere
// else in the corpus leaves the key as it was.
import { readdir, stat } from "node:fs/promises";
import { collectedPaths } from "../stages/keyed.js";
import { join, relative } from "node:path";
import { BuildCache } from "../cache/build-cache.js";
import { toolVersion } from "../output/manifest.js";
import { hashFile } from "../lib/hash.js";
import { STAGES } from "../stages/index.js";
import type { StageEntry } from "../pipeline/config.js";
import type { StageContext } from "../types.js";
import { IDS_CHECK } from "./plan.js";
import { STEP_FORMAT } from "./step-memo.js";
import { mixtureOf, tallyFile, talliesHere } from "./mixture-tally.js";
import { applierOf, dropsFile, keyedDirs, sourceOf, summaryFile, unitFixes, unitsFile, type PackGroup, type TaskEnv } from "./unit-io.js";

/** The fingerprint of unit u's file written by phase `phase`, when that phase left one. */
function fingerprintOf(env: TaskEnv, phase: string, u: number): string | undefined {
  for (const d of env.done.get(phase) ?? []) {
    const f = d.units[String(u)];
    if (f) return f.fp;
  }
  return undefined;
}

/** A stage entry as it decides bytes: its options and what it reads besides (a tokenizer file's content). */
function entryIdentity(e: StageEntry, baseDir: string): unknown {
  const def = STAGES[e.name];
  return { [e.name]: e.options, ...(def?.identity ? { identity: def.identity(e.options, baseDir) } : {}) };
}

const common = (env: TaskEnv) => ({ format: STEP_FORMAT, siftpack: toolVersion(), seed: env.p.config.seed, partitions: env.plan.tasks });

/** XXH64 of each file (null when absent), by path relative to the work directory. */
async function filesDigest(env: TaskEnv, paths: string[]): Promise<[string, string | null][]> {
  const out: [string, string | null][] = [];
  for (const path of [...new Set(paths)].sort()) out.push([relative(env.plan.workDir, path), (await hashFile(path).catch(() => undefined))?.xxh64 ?? null]);
  return out;
}

/**
 * Per task: the digest of what keyed stage s's applier read (the same for every unit), and of its
 * decision files about unit u, each made once (a group's key and its pieces' keys read the same files).
 */
const prints = new WeakMap<TaskEnv, { appliers: Map<number, Promise<unknown>>; units: Map<string, Promise<unknown>> }>();

/** What keyed stage `s` decides about unit u as the unit's reader applies it: the decision files, and what the applier read. */
async function decisionsPrint(env: TaskEnv, s: number, u: number, count: StageContext["count"]): Promise<unknown> {
  let p = prints.get(env);
  if (!p) prints.set(env, (p = { appliers: new Map(), units: new Map() }));
  let applier = p.appliers.get(s);
  if (!applier) p.appliers.set(s, (applier = applierOf(env, s, count).then((a) => filesDigest(env, a.read))));
  let unit = p.units.get(`${s}/${u}`);
  if (!unit) p.units.set(`${s}/${u}`, (unit = filesDigest(env, keyedDirs(env, s).decisionPaths(u))));
  return { applier: await applier, unit: await unit };
}

/** The key of unit u's step in pass phase k (undefined when the unit file it reads has no fingerprint). */
export async function passKey(env: TaskEnv, u: number, count: StageContext["count"]): Promise<string | undefined> {
  const does = env.phase.does;
  if (does.kind !== "pass") return undefined;
  const { from, keyed } = sourceOf(env.plan, env.phase.index);
  const input = fingerprintOf(env, from.name, u);
  if (!input) return undefined;
  const decisions = [];
  for (const s of keyed) decisions.push(await decisionsPrint(env, s, u, count));
  const { baseDir, config } = env.p;
  return BuildCache.key({
    step: "pass",
    ...common(env),
    u,
    input,
    decisions,
    // Read units are numbered and subsampled as they leave the read phase (recordsBefore).
    read: from.does.kind === "read" ? { fix: unitFixes(env)[u], weight: env.units[u].source.weight } : null,
    entries: does.entries.map((e) => entryIdentity(e, baseDir)),
    collect: does.collect === undefined ? null : entryIdentity(config.stages[does.collect], baseDir),
    tally: talliesHere(env),
  });
}

/** The key of the read phase's second look at unit u (the explicit-id check's collection, the mixture's tally). */
export function rereadKey(env: TaskEnv, u: number, read: string, tally: boolean, feed: boolean | undefined): string {
  return BuildCache.key({ step: "reread", ...common(env), u, read, tally, feed: feed ?? null });
}

/** The key of packing group `group` (undefined when a unit file it reads has no fingerprint). */
export async function packKey(env: TaskEnv, group: PackGroup, count: StageContext["count"]): Promise<string | undefined> {
  const { plan, p } = env;
  const k = env.phase.index;
  const { from, keyed } = sourceOf(plan, k);
  const phases = plan.phases.slice(0, k).filter((ph) => ph.does.kind === "read" || ph.does.kind === "pass" || ph.does.kind === "whole");
  const units = [];
  for (const u of group.units) {
    // Every phase's drops are read, and the last one's records.
    const prints = phases.map((ph) => fingerprintOf(env, ph.name, u));
    if (prints.some((f) => f === undefined)) return undefined;
    const decisions = [];
    for (const s of keyed) decisions.push(await decisionsPrint(env, s, u, count));
    const ids = plan.keyed.has(IDS_CHECK) ? await decisionsPrint(env, IDS_CHECK, u, count) : null;
    units.push({ u, prints, decisions, ids, fix: unitFixes(env)[u] });
  }
  // A mixture's plan per source: a group is keyed by its own sources' entries only.
  const sources = new Set(group.units.map((u) => env.units[u].source.name));
  const mixture = (await mixtureOf(env))?.sources.filter((s) => sources.has(s.source));
  return BuildCache.key({
    step: "pack",
    ...common(env),
    g: group.g,
    rows: group.rows ?? null,
    from: from.name,
    units,
    // Everything but where tasks run: packing, shards, the ledger's wording and the analyses read the settings.
    config: { ...p.config, cluster: null },
    stages: p.config.stages.map((e) => entryIdentity(e, p.baseDir)),
    analyses: plan.analyses.map((a) => a.key),
    // The analyses' files are named by piece (collectPieces), no longer by group: entries of groups kept before are not taken.
    analysis_files: "per piece",
    mixture: mixture ?? null,
  });
}

/**
 * The key of a piece of the analyses' collection (collectPieces): unit u's records as `group` packs
 * them. What the collectors see is what packing keeps of the unit, so the key is that of a group of
 * the unit alone (with the group's share of rows), plus the piece's number, which its files' names carry.
 */
export async function pieceKey(env: TaskEnv, group: PackGroup, u: number, piece: number, count: StageContext["count"]): Promise<string | undefined> {
  const alone = await packKey(env, { g: -1, units: [u], bytes: 0, ...(group.rows ? { rows: group.rows } : {}) }, count);
  return alone === undefined ? undefined : BuildCache.key({ step: "collect", piece, alone });
}

/** Paths that exist, of those given. */
async function existing(paths: string[]): Promise<string[]> {
  const out: string[] = [];
  for (const path of paths) if ((await stat(path).catch(() => undefined))?.isFile()) out.push(path);
  return out;
}

/** The files a keyed stage's collector wrote for unit (or group) `u` under `collectDir`. */
export async function collectedFiles(collectDir: string, u: number): Promise<string[]> {
  return existing(await collectedPaths(collectDir, u));
}

/** The files a pass left for unit u: records, drops, summaries, the mixture's tally, collected material. */
export async function passFiles(env: TaskEnv, u: number): Promise<string[]> {
  const work = env.plan.workDir;
  const name = env.phase.name;
  const does = env.phase.does;
  const collect = does.kind === "pass" && does.collect !== undefined ? await collectedFiles(join(work, env.plan.keyed.get(does.collect)!.collect), u) : [];
  return [...(await existing([unitsFile(work, name, u), dropsFile(work, name, u), summaryFile(work, name, u), tallyFile(work, name, u)])), ...collect];
}

/** The files the read phase's second look left for unit u: the id check's collection, the tally. */
export async function rereadFiles(env: TaskEnv, u: number): Promise<string[]> {
  const work = env.plan.workDir;
  const ids = env.plan.keyed.get(IDS_CHECK);
  return [...(await existing([tallyFile(work, "read", u)])), ...(ids ? await collectedFiles(join(work, ids.collect), u) : [])];
}

/** Every file under a directory, sorted. */
export async function filesUnder(dir: string): Promise<string[]> {
  const out: string[] = [];
  for (const e of await readdir(dir, { withFileTypes: true }).catch(() => [])) {
    const path = join(dir, e.name);
    if (e.isDirectory()) out.push(...(await filesUnder(path)));
    else if (e.isFile()) out.push(path);
  }
  return out.sort();
}
