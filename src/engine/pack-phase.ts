// The pack phase, one task per share of packing groups: every unit's fates merged in row order into
// the group's ledger (one gzip member) and quarantine lines, the kept records packed per split into
// blocks (best-fit looks ahead within the group; rows shuffled within the group), the group's shards
// written, and the analyses' collectors fed, one piece (a unit's records) at a time, unless the
// cache keeps the piece. Everything lands in <work>/pack/groups/<g>/ (the collected files under
// <work>/pack/analysis-<key>/); assemble joins the groups without reading a token.
import { mkdir, writeFile } from "node:fs/promises";
import { join } from "node:path";
import { createPacker, type Packer } from "../stages/pack.js";
import type { OutputSettings } from "../stages/output-settings.js";
import { collectUnit, KeyedDirs, type Collectors } from "../stages/keyed.js";
import { dropRecord, readEvents, type UnitEvent } from "../cache/record-events.js";
import { crashPoint } from "../lib/crash-point.js";
import { copiesFor } from "./weights.js";
import { copiesOf as mixtureCopies, mixtureRank, partOf } from "./mixture.js";
import { mixtureOf } from "./mixture-tally.js";
import { Ledger, type LedgerCounts, type TruncatedFile } from "../output/ledger.js";
import { ShardWriter, type Emit, type SplitStats, type WrittenFile } from "../output/shard-writer.js";
import type { AnalysisSteps } from "../analysis/steps.js";
import type { DocRecord, StageContext } from "../types.js";
import type { QuarantineEntry } from "../sources/source.js";
import { ConversationTally } from "../chat/tally.js";
import { longestUncut, questionEdges, turnEdges } from "../chat/layout.js";
import type { CutEdges } from "../pack/packer.js";
import { giveSignature, signingStage, UnitSignatures } from "../analysis/dedup-signatures.js";
import type { MinhashOptions } from "../dedup/options.js";
import { dropsFile, fixFromRead, keyedDirs, materializes, recordsBefore, unitFixes, unitsFile, type PackGroup, type TaskEnv } from "./unit-io.js";

/** What one group leaves for assemble (group.json). */
export interface GroupResult {
  counts: LedgerCounts;
  splits: Record<string, SplitStats>;
  /** Shard files, paths relative to the group's directory (= their paths in the build). */
  files: WrittenFile[];
}

export const groupDir = (work: string, phase: string, g: number) => join(work, phase, "groups", String(g).padStart(5, "0"));

/** The analyses' files: collected per piece (collectPieces) under the pack phase, joined per partition in the analysis phase. */
export function analysisDirs(env: TaskEnv, pack: string, analysis: string, key: string, pieces: number): KeyedDirs {
  const work = env.plan.workDir;
  return new KeyedDirs(join(work, pack, `analysis-${key}`), join(work, analysis, key), undefined, pieces, env.plan.tasks);
}

type Fate = { i: number; bad?: QuarantineEntry; drop?: { r: DocRecord; reason: string; detail?: Record<string, unknown> } };

export interface PackGroupOptions {
  out: OutputSettings;
  count: StageContext["count"];
  /** Analyses that apply, with their collectors (made once per task). */
  analyses: { steps: AnalysisSteps; dirs: KeyedDirs; collectors: Collectors }[];
  /** The keyed stage index of the ids check, when the plan has one. */
  ids?: number;
  /**
   * The group's pieces of the analyses' collection (collectPieces): the first one's number, and
   * their keeping in the cache. `restore` links a piece's files when it is kept (true) and the
   * unit's records then go to no collector; `save` keeps a piece just collected.
   */
  pieces: { first: number; restore(u: number, piece: number): Promise<boolean>; save(u: number, piece: number): Promise<void> };
}

/**
 * Packs one group into its directory, which the caller has removed (a rerun starts clean, and a group
 * linked from the cache finds no stale files). Returns once every record is packed, counted and fed
 * to the analyses, with `written`: the group's last shards and its ledger going to disk. So a task
 * packs its next group while this one's files are written (they are most of a group's bytes: a
 * group of 32 MB of text fills about one shard), instead of waiting with a core idle.
 */
export async function packGroup(env: TaskEnv, group: PackGroup, o: PackGroupOptions): Promise<{ written: Promise<GroupResult> }> {
  const { p, plan } = env;
  const { config } = p;
  const work = plan.workDir;
  const dir = groupDir(work, env.phase.name, group.g);
  await mkdir(dir, { recursive: true });
  const ledger = new Ledger(join(dir, "ledger.jsonl.gz"), join(dir, "quarantine.jsonl"));
  const pack = o.out.pack;
  const prefix = `${String(group.g).padStart(5, "0")}-`;
  const writers = new Map<string, { writer: ShardWriter; packer: Packer }>();
  const writerFor = (split: string) => {
    let w = writers.get(split);
    if (!w) {
      const writer = new ShardWriter({ outDir: dir, split, length: pack.length, shardBlocks: config.output.shard_blocks, tokenDtype: o.out.tokenDtype, segmentDtype: o.out.segmentDtype, emit: pack.emit as Emit[], prefix, origins: true });
      const packer = createPacker(pack, o.out.eosId, (t, s, pieces) => writer.addRow(t, s, pieces), { seed: config.seed, split, group: group.g });
      writers.set(split, (w = { writer, packer }));
    }
    return w;
  };
  const talks = new Map<string, ConversationTally>();
  const talkFor = (split: string) => {
    let t = talks.get(split);
    if (!t) talks.set(split, (t = new ConversationTally(o.out.roles ?? [])));
    return t;
  };
  const weights = new Map(config.sources.map((s) => [s.name, s.weight]));
  // With a mixture, a train record's copies come from the plan made of every unit's token figures.
  const mixture = await mixtureOf(env);
  const bySource = new Map((mixture?.sources ?? []).map((s) => [s.source, s]));
  // A train record's whole copies, and the tokens of its part copy (a mixture's one record per source whose copy is cut), from one draw.
  const trainCopies = (r: DocRecord): { whole: number; part: number } => {
    const m = bySource.get(r.source);
    if (m) {
      const rank = mixtureRank(r.source, r.id, config.seed);
      return { whole: mixtureCopies(m, rank), part: partOf(m, rank) };
    }
    const w = weights.get(r.source) ?? 1;
    return { whole: w === 1 ? 1 : copiesFor(w, `${r.source}\u0000${r.id}`, config.seed), part: 0 };
  };
  const idsDirs = o.ids === undefined ? undefined : keyedDirs(env, o.ids);
  // The MinHash dedup stage's signatures, for the near-duplicate figure when no later stage changes a text.
  const signing = o.analyses.length > 0 ? signingStage(config) : undefined;
  let signaturesTaken = 0;
  const signatures = signing === undefined ? undefined : { dirs: keyedDirs(env, signing), k: (config.stages[signing].options as MinhashOptions).permutations };
  // The collectors of the unit being read: none when its piece was kept in the cache.
  let feeds: Awaited<ReturnType<typeof collectUnit>>[] = [];
  let piecesReused = 0;
  const k = env.phase.index;
  // A share of a large file's rows: the rest of its units' rows are other groups'.
  const span = group.rows;
  const mine = (i: number) => !span || (i >= span.from && i < span.to);
  // The current unit's signatures (an open file), closed before the next unit's are opened.
  let signed: UnitSignatures | undefined;
  try {
    for (const [j, u] of group.units.entries()) {
      const fix = unitFixes(env)[u];
      const repeated = idsDirs ? await idsDirs.decisions(u) : undefined;
      const piece = o.pieces.first + j;
      const collect = o.analyses.length > 0 && !(await o.pieces.restore(u, piece));
      if (o.analyses.length > 0 && !collect) piecesReused++;
      for (const a of collect ? o.analyses : []) feeds.push(await collectUnit(a.dirs, a.collectors, piece));
      signed = collect && signatures ? await UnitSignatures.open(signatures.dirs, u, signatures.k) : undefined;
      const fates: Fate[] = [];
      let truncated: TruncatedFile | undefined;
      for await (const e of readEvents(unitsFile(work, "read", u), { records: false })) {
        if (e.k === "end" && e.truncated && (!span || span.last)) {
          // Rows read count the whole file's: a later part of a file follows its earlier parts' rows.
          const unit = env.units[u];
          truncated = { source: unit.source.name, file: unit.path, ...e.truncated, rows_read: e.truncated.rows_read + fix.rows };
        } else if (e.k === "bad") {
          if (mine(e.i + fix.rows)) fates.push({ i: e.i + fix.rows, bad: { ...e.entry, line: e.entry.line + fix.lines } });
        } else if (e.k === "drop") {
          const d = dropOf(e);
          fixFromRead(env, u, d.r);
          if (mine(d.r.seq)) fates.push({ i: d.r.seq, drop: d });
        }
      }
      for (const ph of plan.phases.slice(1, k)) {
        if (ph.does.kind === "read" || !materializes(ph)) continue;
        for await (const e of readEvents(dropsFile(work, ph.name, u), { records: false })) if (e.k === "drop" && mine(e.i)) fates.push({ i: e.i, drop: dropOf(e) });
      }
      // Drops made while reading (decisions applied now), in row order as the records come.
      const late: Fate[] = [];
      const ctx: StageContext = { seed: config.seed, log: env.log, workDir: dir, addOutputFile: () => {}, count: o.count, drop: (r, reason, detail) => late.push({ i: r.seq, drop: { r, reason, detail } }) };
      const records = recordsBefore(env, k, u, ctx, { text: collect ? textUse(o.analyses.map((a) => a.steps.usesText)) : false, ...(span ? { rows: span } : {}) });
      const emit = async (f: Fate | { i: number; rec: DocRecord }) => {
        if ("rec" in f || f.drop) {
          const r = "rec" in f ? f.rec : f.drop!.r;
          const first = repeated?.get(r.seq - fix.rows);
          if (first !== undefined) {
            // Worded as the reader words a repeat within its unit when the first is in the same file (an earlier part of it), so the ledger does not depend on unit_mb.
            const sameFile = typeof first === "number" && env.units[first]?.path === env.units[u].path;
            await ledger.quarantined({ source: r.source, file: r.origin.file, line: r.origin.line, error: `duplicate id "${r.id}"${sameFile ? "" : " (also in an earlier file of the source)"}` });
            return;
          }
          if ("rec" in f) await keep(f.rec);
          else ledger.dropped(r, f.drop!.reason, f.drop!.detail);
        } else await ledger.quarantined(f.bad!);
        await ledger.flush();
      };
      const keep = async (r: DocRecord) => {
        const split = r.split ?? "train";
        // Repetition serves the training mixture only; held-out text is seen once.
        const { whole: n, part } = split === "train" ? trainCopies(r) : { whole: 1, part: 0 };
        crashPoint("records");
        if (n === 0 && part === 0) {
          // A mixture's share below the source's tokens leaves this record out of train (README, Mixtures).
          ledger.dropped(r, "subsampled", { share: +bySource.get(r.source)!.share.toFixed(6) });
          return;
        }
        const fit = r.chat ? conversationFit(r, pack) : undefined;
        if (fit?.drop) {
          ledger.dropped(r, fit.drop, { tokens: r.tokens!.length, length: pack.length });
          writerFor(split);
          talkFor(split).dropped();
          return;
        }
        ledger.kept(r, { ...(n !== 1 ? { copies: n } : {}), ...(part > 0 ? { part_tokens: part } : {}) });
        const { writer, packer } = writerFor(split);
        if (r.chat) talkFor(split).packed(r.chat, r.tokens!.length, fit!.cut);
        // Each piece's origin (as the ledger names the record) goes with it into the shard's origins index;
        // a conversation's also carries its layout, from which the shard writer masks the untrained tokens.
        const origin = { source: r.source, id: r.id, file: r.origin.file, line: r.origin.line, ...(r.chat ? { chat: r.chat } : {}) };
        for (let c = 0; c < n; c++) packer.add(r.tokens!, c === 0 ? origin : { ...origin, copy: c }, fit?.edges);
        // A mixture's part copy: the record's first tokens, as its last copy (README, Mixtures); a
        // conversation's is cut at turn edges where they keep its pieces within a block.
        if (part > 0) packer.add(r.tokens!.subarray(0, part), { ...origin, ...(n > 0 ? { copy: n } : {}), part }, fit?.edges && longestUncut(r.chat!, part) <= pack.length ? { ...fit.edges, at: fit.edges.at.filter((e) => e < part) } : undefined);
        const signature = signed && (await signed.find(r));
        if (signature) {
          giveSignature(r, signature);
          signaturesTaken++;
        }
        for (const f of feeds) await f.add(r);
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
      if (truncated) {
        // After the file's last row; the source accepted the loss (the read phase fails otherwise), so it is a warning.
        ledger.truncated(truncated);
        await ledger.flush();
        env.log.warn({ source: truncated.source, file: truncated.file, rows_read: truncated.rows_read, rows_lost: truncated.rows_lost, bytes_read: truncated.bytes_read, size: truncated.size }, `source "${truncated.source}": ${truncated.file} is truncated (${truncated.error}) after ${truncated.rows_read} rows; built from what could be read (accept_truncated)`);
      }
      await signed?.close();
      signed = undefined;
      for (const f of feeds) await f.finish();
      feeds = [];
      if (collect) await o.pieces.save(u, piece);
    }
  } catch (err) {
    await signed?.close().catch(() => {});
    for (const f of feeds) await f.abort();
    throw err;
  }
  // The splits' last shards are written (and synced) together, with the ledger's end.
  const written = async (): Promise<GroupResult> => {
    const ends: Promise<void>[] = [];
    for (const { writer, packer } of writers.values()) {
      packer.finish();
      ends.push(
        writer.finish().then(() => {
          Object.assign(writer.stats, packer.stats);
          // A conversation cut where a turn not trained on starts loses no target there.
          writer.stats.targets_lost_to_cuts -= writer.untrainedCutStarts;
        }),
      );
    }
    for (const [split, t] of talks) writers.get(split)!.writer.stats.conversations = t.s;
    ends.push(ledger.close());
    const failed = (await Promise.allSettled(ends)).find((r) => r.status === "rejected");
    if (failed) throw (failed as PromiseRejectedResult).reason;
    const result: GroupResult = {
      counts: ledger.counts,
      splits: Object.fromEntries([...writers].map(([s, w]) => [s, w.writer.stats])),
      files: [...writers.values()].flatMap((w) => w.writer.files),
    };
    await writeFile(join(dir, "group.json"), JSON.stringify(result) + "\n");
    env.log.debug({ group: group.g, units: group.units.length, ...(o.analyses.length > 0 ? { pieces_reused: piecesReused } : {}), ...(signatures ? { signatures_taken: signaturesTaken } : {}) }, "group packed");
    return result;
  };
  return { written: written() };
}

/**
 * How a conversation goes into the blocks: whole when it fits; longer, by long_conversations: cut at
 * its turn edges (left out when one turn with its markers is longer than a block), left out, or cut
 * like any document (and always with concat, which cuts at every block edge).
 */
function conversationFit(r: DocRecord, pack: OutputSettings["pack"]): { edges?: CutEdges; cut: "none" | "at_turns" | "anywhere"; drop?: string } {
  const n = r.tokens!.length;
  const L = pack.length;
  if (n <= L) return { cut: "none" };
  const mode = pack.long_conversations ?? "at_turns";
  if (mode === "drop") return { cut: "none", drop: "conversation-too-long" };
  if (mode === "anywhere" || pack.strategy === "concat") return { cut: "anywhere" };
  if (longestUncut(r.chat!, n) > L) return { cut: "none", drop: "turn-too-long" };
  return { edges: { at: turnEdges(r.chat!), preferred: questionEdges(r.chat!) }, cut: "at_turns" };
}

function dropOf(e: Extract<UnitEvent, { k: "drop" }>): { r: DocRecord; reason: string; detail?: Record<string, unknown> } {
  return { r: dropRecord(e), reason: e.reason, detail: e.detail };
}

/** The least decoding of the records' text that serves every analysis (see AnalysisSteps.usesText). */
function textUse(uses: (boolean | "utf8")[]): boolean | "utf8" {
  return uses.includes(true) ? true : uses.includes("utf8") ? "utf8" : false;
}
