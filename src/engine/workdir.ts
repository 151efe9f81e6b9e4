// The shared work directory: one directory per phase, files that appear only when complete, and a
// marker per task written last. A task killed mid-way leaves temporaries (`*.tmp-*`), never a file
// under its final name that a later phase could take for complete.
//
//   <work>/<phase>/task-<i>.done.json     written last: the task's counters, files, input facts
//   <work>/<phase>/task-<i>.started.json  when it began, on which host, which process
//   <work>/<phase>/task-<i>.failed.json   the error, when it failed (not written when killed)
//   <work>/logs/<phase>-<i>.log           the task's log lines (JSON)
import { readdir, readFile, rm } from "node:fs/promises";
import { writeAtomic } from "../lib/work-files.js";
import { hostname } from "node:os";
import { join } from "node:path";
import { SiftpackError } from "../errors.js";
import { processAlive } from "../lib/process-alive.js";
import type { Phase, PhasePlan } from "./plan.js";
import type { CacheReport } from "../cache/build-cache.js";

/** What a finished task leaves for the phases after it. */
export interface TaskDone {
  /** The plan this task belongs to: tasks of another plan (edited pipeline, other inputs) do not count. */
  plan: string;
  phase: string;
  index: number;
  tasks: number;
  /** Stage counters raised by the task (summed into the manifest's stage_counts). */
  counts: Record<string, number>;
  /**
   * Per input file the task handled: rows read (read phase), records written, (read phase) size and
   * XXH64, and the fingerprint of the unit file it wrote (step-keys.ts), when it has one.
   */
  units: Record<string, { rows?: number; records: number; size?: number; xxh64?: string; lines?: number; fp?: string }>;
  /** Build files the task wrote under <phase>/files/, in order (clusters.jsonl, tokenizer.json, …). */
  files: string[];
  cache?: CacheReport;
  seconds: number;
  /** The build-cache entries the task used, when it ran in a process of its own (`siftpack task`): the assemble task prunes to them. */
  used?: string[];
}

export { AtomicStream, linkAtomic, linkOrCopy, writeAtomic } from "../lib/work-files.js";
export const unitName = (u: number) => String(u).padStart(6, "0");
export const phaseDir = (work: string, phase: string) => join(work, phase);
const marker = (work: string, phase: string, i: number, what: "done" | "started" | "failed") => join(work, phase, `task-${i}.${what}.json`);
export const logPath = (work: string, phase: string, i: number) => join(work, "logs", `${phase}-${i}.log`);

export async function readDone(work: string, phase: string, i: number): Promise<TaskDone | undefined> {
  try {
    return JSON.parse(await readFile(marker(work, phase, i, "done"), "utf8")) as TaskDone;
  } catch {
    return undefined;
  }
}

/** Every task marker of a phase, in index order; throws naming the first missing one. */
export async function requireDone(plan: PhasePlan, planKey: string, phase: Phase, forPhase: string): Promise<TaskDone[]> {
  const all: TaskDone[] = [];
  for (let i = 0; i < phase.tasks; i++) {
    const d = await readDone(plan.workDir, phase.name, i);
    if (!d || d.plan !== planKey || d.tasks !== phase.tasks)
      throw new SiftpackError(
        "SP_TASK_ORDER",
        `phase "${forPhase}" cannot start: task ${i} of phase "${phase.name}" (${phase.tasks} task${phase.tasks === 1 ? "" : "s"}) has not finished${d ? " for this pipeline and these inputs" : ""}; run it with: siftpack task ${plan.pipeline} --phase ${phase.name} --index ${i}`,
      );
    all.push(d);
  }
  return all;
}

export async function markStarted(work: string, phase: string, i: number): Promise<void> {
  await rm(marker(work, phase, i, "failed"), { force: true });
  await rm(marker(work, phase, i, "done"), { force: true });
  await writeAtomic(marker(work, phase, i, "started"), JSON.stringify({ host: hostname(), pid: process.pid, at: new Date().toISOString() }) + "\n");
}

export async function markDone(work: string, d: TaskDone): Promise<void> {
  await writeAtomic(marker(work, d.phase, d.index, "done"), JSON.stringify(d) + "\n");
}

export async function markFailed(work: string, phase: string, i: number, error: string): Promise<void> {
  await writeAtomic(marker(work, phase, i, "failed"), JSON.stringify({ error, host: hostname(), pid: process.pid, at: new Date().toISOString() }) + "\n");
}

/**
 * Removes what an earlier, interrupted run of this task left: its temporaries. Tasks of one phase
 * run at the same time, so only files of the task's own share (input files or partitions, the
 * number their names start with) are touched; `mine` undefined: the phase has one task.
 */
export async function clearTemporaries(dir: string, mine?: number[]): Promise<void> {
  const walk = async (d: string): Promise<void> => {
    for (const e of await readdir(d, { withFileTypes: true }).catch(() => [])) {
      const p = join(d, e.name);
      // A keyed step's decisions are named by unit under a directory per partition; the step
      // removes its own partitions' directory before it writes, so they are not this walk's.
      if (e.isDirectory()) {
        if (e.name !== "decisions") await walk(p);
      }
      else if (/\.tmp-[0-9a-f]{8}$/.test(e.name)) {
        const n = Number(/^(\d+)\./.exec(e.name)?.[1] ?? NaN);
        if (mine === undefined || mine.includes(n)) await rm(p, { force: true });
      }
    }
  };
  await walk(dir);
}

/**
 * `running`: started and not finished, on another host or alive here; `stopped`: started on this
 * host by a process that is gone without finishing (killed, or its node rebooted).
 */
export type TaskState = { index: number; state: "done" | "failed" | "running" | "stopped" | "pending"; error?: string; lastLog?: string; host?: string; seconds?: number };


/** Where each task of each phase stands, read from the markers and logs alone. */
export async function phaseStates(work: string, phases: { name: string; tasks: number }[]): Promise<{ phase: string; tasks: TaskState[] }[]> {
  const json = async (p: string) => JSON.parse(await readFile(p, "utf8").catch(() => "null"));
  const lastLine = async (p: string) => {
    const text = await readFile(p, "utf8").catch(() => "");
    const lines = text.trimEnd().split("\n").filter(Boolean);
    return lines.length ? lines[lines.length - 1] : undefined;
  };
  const out = [];
  for (const ph of phases) {
    const tasks: TaskState[] = [];
    for (let i = 0; i < ph.tasks; i++) {
      const done = await json(marker(work, ph.name, i, "done"));
      const failed = await json(marker(work, ph.name, i, "failed"));
      const started = await json(marker(work, ph.name, i, "started"));
      if (done) tasks.push({ index: i, state: "done", seconds: done.seconds });
      else if (failed) tasks.push({ index: i, state: "failed", error: failed.error, host: failed.host, lastLog: await lastLine(logPath(work, ph.name, i)) });
      else if (started)
        tasks.push({ index: i, state: started.host === hostname() && !processAlive(started.pid) ? "stopped" : "running", host: started.host, lastLog: await lastLine(logPath(work, ph.name, i)) });
      else tasks.push({ index: i, state: "pending" });
    }
    out.push({ phase: ph.name, tasks });
  }
  return out;
}
