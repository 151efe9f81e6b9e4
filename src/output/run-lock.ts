// One build at a time per output: `.<name>.lock` beside the output directory, created exclusively
// (O_EXCL) and holding the run's pid and host. A second run into the same output refuses instead of
// deleting the first one's staging and work directories under it; the lock of a run that died
// (its pid gone on this host) is taken over.
import { hostname } from "node:os";
import { link, mkdir, readFile, rename, stat, unlink, writeFile } from "node:fs/promises";
import { basename, dirname, join } from "node:path";
import { setTimeout as sleep } from "node:timers/promises";
import { SiftpackError, describeSystemError } from "../errors.js";
import type { Logger } from "../types.js";
import { processAlive } from "../lib/process-alive.js";

export function runLockOf(outDir: string): string {
  return join(dirname(outDir), `.${basename(outDir)}.lock`);
}

interface Holder {
  pid: number;
  host: string;
  started: string;
}

export interface RunLock {
  path: string;
  /** Removes the lock if it is still this run's; never throws (a lock left behind is taken over later). */
  release(): Promise<void>;
}

/** A lock file younger than this that cannot be read yet is being written by its run. */
const WRITING_MS = 2000;

function parseHolder(text: string): Holder | undefined {
  try {
    const h = JSON.parse(text);
    return Number.isInteger(h?.pid) && typeof h?.host === "string" ? h : undefined;
  } catch {
    return undefined;
  }
}


/**
 * Creates the lock file holding `me`; false when it exists already. Written under a name of its own
 * first and then linked into place (a link fails when the name exists), so the lock never exists
 * empty: a run stopped between creating and writing it cannot be taken for one that crashed there.
 */
async function create(path: string, me: Holder): Promise<boolean> {
  const tmp = `${path}.${process.pid}.tmp`;
  await writeFile(tmp, JSON.stringify(me) + "\n");
  try {
    await link(tmp, path);
    return true;
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === "EEXIST") return false;
    throw err;
  } finally {
    await unlink(tmp).catch(() => {});
  }
}

/**
 * Moves a dead run's lock out of the way. Renaming first and comparing after means that of two
 * runs taking over the same stale lock, the later one notices it moved the earlier one's fresh
 * lock and puts it back.
 */
async function takeOver(path: string, staleText: string): Promise<void> {
  const aside = `${path}.stale-${process.pid}`;
  try {
    await rename(path, aside);
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === "ENOENT") return;
    throw err;
  }
  if ((await readFile(aside, "utf8").catch(() => undefined)) === staleText) await unlink(aside).catch(() => {});
  else await rename(aside, path).catch(() => {});
}

/** Takes the output's lock, or refuses (exit 1) naming the run that holds it. */
export async function acquireRunLock(outDir: string, log: Logger): Promise<RunLock> {
  const path = runLockOf(outDir);
  const me: Holder = { pid: process.pid, host: hostname(), started: new Date().toISOString() };
  const release = async () => {
    const h = parseHolder(await readFile(path, "utf8").catch(() => ""));
    if (h && h.pid === me.pid && h.host === me.host && h.started === me.started) await unlink(path).catch(() => {});
  };
  try {
    await mkdir(dirname(outDir), { recursive: true });
  } catch (err) {
    // A recursive mkdir meeting a file on the way says EEXIST.
    const why = (err as NodeJS.ErrnoException).code === "EEXIST" ? "a path component is not a directory" : describeSystemError(err);
    throw new SiftpackError("SP_OUTPUT", `cannot create output directory ${outDir}: ${why}`, { cause: err });
  }
  try {
    for (let attempt = 0; attempt < 100; attempt++) {
      if (await create(path, me)) return { path, release };
      const text = await readFile(path, "utf8").catch((err) => ((err as NodeJS.ErrnoException).code === "ENOENT" ? undefined : Promise.reject(err)));
      if (text === undefined) continue; // released meanwhile
      const other = parseHolder(text);
      if (!other) {
        // Just created and not yet written, or left empty by a crash at that moment.
        const age = Date.now() - (await stat(path).then((s) => s.mtimeMs, () => 0));
        if (age < WRITING_MS && attempt < 50) {
          await sleep(50);
          continue;
        }
        log.warn({ lock: path }, `taking over the unreadable lock ${path}`);
        await takeOver(path, text);
        continue;
      }
      if (other.host !== me.host || processAlive(other.pid) || attempt >= 5)
        throw new SiftpackError(
          "SP_OUTPUT",
          `${outDir} is being built by another run (pid ${other.pid} on ${other.host}, since ${other.started}); wait for it to finish, or remove ${path} if that run is gone`,
        );
      log.warn({ lock: path, pid: other.pid, host: other.host }, `taking over the lock ${path} of run pid ${other.pid} on ${other.host}, which is no longer running`);
      await takeOver(path, text);
    }
    throw new SiftpackError("SP_OUTPUT", `cannot take the lock ${path}: other runs keep taking it; run again when they are done`);
  } catch (err) {
    if (err instanceof SiftpackError) throw err;
    throw new SiftpackError("SP_OUTPUT", `cannot write the lock file ${path} beside output directory ${outDir}: ${describeSystemError(err)}`, { cause: err });
  }
}
