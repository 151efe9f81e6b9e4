// The files of a build directory that its manifest does not list, and whether a page is a report
// siftpack wrote: one rule for `run` (which replaces only an earlier build), `verify` (which names
// every stray file) and `report` (which overwrites only an earlier report).
import { open, readdir } from "node:fs/promises";
import { join } from "node:path";

/** The report's default name in the build directory: the one file besides the build's own that `verify` accepts there. */
export const REPORT_NAME = "report.html";

/**
 * Files siftpack writes at the top of a build besides those its manifest lists: the manifest
 * itself and build-info.json (times and paths, unhashed on purpose). A report.html counts only
 * when it is one siftpack wrote.
 */
const OWN_FILES = new Set(["manifest.json", "build-info.json"]);

/** What every report starts with (src/report/page.ts): the doctype, and within the head the generator line. */
const REPORT_START = "<!doctype html>";
const REPORT_GENERATOR = '<meta name="generator" content="siftpack ';

/**
 * Whether `path` is a report siftpack wrote: it starts with the page's doctype and names siftpack as
 * generator in its head (well within the first 4 KiB). A file that cannot be read is not taken for one,
 * so it is never replaced nor passed over.
 */
export async function isSiftpackReport(path: string): Promise<boolean> {
  let fh;
  try {
    fh = await open(path, "r");
    const buf = Buffer.alloc(4096);
    const { bytesRead } = await fh.read(buf, 0, buf.length, 0);
    const head = buf.subarray(0, bytesRead).toString("utf8");
    return head.startsWith(REPORT_START) && head.includes(REPORT_GENERATOR);
  } catch {
    return false;
  } finally {
    await fh?.close();
  }
}

/** A file found in a build directory that the build did not write. */
export interface UnlistedFile {
  /** Relative to the build directory, with "/" between folders. */
  path: string;
  kind: "file" | "symbolic link" | "special file";
}

/**
 * Every entry under `dir` that is neither a path the manifest lists nor one of siftpack's own files,
 * in path order (names sorted by code unit, a folder's entries at its place), stopping after `limit`.
 * Folders are walked, not judged: an empty one holds nothing to lose. Errors reading `dir` propagate.
 */
export async function unlistedFiles(dir: string, listed: ReadonlySet<unknown>, limit = Infinity): Promise<UnlistedFile[]> {
  const found: UnlistedFile[] = [];
  const walk = async (rel: string): Promise<void> => {
    const entries = await readdir(join(dir, rel), { withFileTypes: true });
    entries.sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
    for (const e of entries) {
      if (found.length >= limit) return;
      const path = rel ? `${rel}/${e.name}` : e.name;
      if (e.isDirectory()) await walk(path);
      else if (listed.has(path) || (!rel && OWN_FILES.has(path))) continue;
      else if (!rel && path === REPORT_NAME && e.isFile() && (await isSiftpackReport(join(dir, path)))) continue;
      else found.push({ path, kind: e.isFile() ? "file" : e.isSymbolicLink() ? "symbolic link" : "special file" });
    }
  };
  await walk("");
  return found;
}
