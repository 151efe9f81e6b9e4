// Groups the given files into sources (same folder, format and compression) and names each with a glob that matches exactly its files.
import { readdir } from "node:fs/promises";
import { basename, dirname, relative, resolve, sep } from "node:path";
import type { Sniffed } from "./sniff.js";

export interface FileGroup {
  /** Source name: letters, digits, "_" and "-", unique among the groups. */
  name: string;
  sniffed: Sniffed;
  /** Absolute paths, in byte order (the order the build reads them). */
  files: string[];
  /** The `files` glob, relative to the pipeline file's folder, forward slashes. */
  glob: string;
}

function byteOrder(a: string, b: string): number {
  return Buffer.compare(Buffer.from(a), Buffer.from(b));
}

/** Characters a glob reads as syntax, escaped with a backslash so a name matches only itself. */
export function globEscape(s: string): string {
  return s.replace(/[\\*?[\]{}()!+@]/g, (c) => `\\${c}`);
}

function toPosix(p: string): string {
  return p.split(sep).join("/");
}

function slug(s: string): string {
  const out = s
    .toLowerCase()
    .replace(/[^a-z0-9_-]+/g, "-")
    .replace(/^-+|-+$/g, "");
  return out || "source";
}

/** The file name without the extensions that tell format and compression. */
function stem(file: string, suffix: string): string {
  const name = basename(file);
  return suffix && name.toLowerCase().endsWith(suffix) ? name.slice(0, name.length - suffix.length) : name;
}

/**
 * A glob over one folder: "dir/*.jsonl.gz" when the group is every file there with that suffix,
 * "dir/{a,b}.csv" for some of them, the escaped path for a single file. Paths are relative to
 * `baseDir` (the pipeline file's folder), as the pipeline file reads them.
 */
async function globFor(files: string[], suffix: string, baseDir: string): Promise<string> {
  const dir = dirname(files[0]);
  // Data far from the pipeline file is named by its absolute path: "../../../data" says less.
  const up = relative(baseDir, dir);
  const rel = toPosix(/^\.\.([\\/]\.\.)+([\\/]|$)/.test(up) ? dir : up) || ".";
  const prefix = rel === "." ? "" : `${globEscape(rel)}/`;
  if (files.length === 1) return prefix + globEscape(basename(files[0]));
  const all = suffix ? (await readdir(dir, { withFileTypes: true })).filter((e) => e.isFile() && e.name.toLowerCase().endsWith(suffix)).map((e) => e.name) : [];
  if (suffix && all.length === files.length && suffix === suffix.toLowerCase() && files.every((f) => basename(f).endsWith(suffix))) return `${prefix}*${suffix}`;
  return `${prefix}{${files.map((f) => globEscape(basename(f))).join(",")}}`;
}

export async function groupFiles(files: { path: string; sniffed: Sniffed }[], baseDir: string): Promise<FileGroup[]> {
  const groups = new Map<string, { sniffed: Sniffed; files: string[] }>();
  for (const f of files) {
    const abs = resolve(f.path);
    const k = [dirname(abs), f.sniffed.format, f.sniffed.compression, f.sniffed.suffix].join("\u0000");
    const g = groups.get(k) ?? { sniffed: f.sniffed, files: [] };
    if (!g.files.includes(abs)) g.files.push(abs);
    groups.set(k, g);
  }
  const out: FileGroup[] = [];
  const used = new Set<string>();
  for (const g of groups.values()) {
    g.files.sort(byteOrder);
    // A folder of several files is named after the folder; a single file after itself.
    const folder = basename(dirname(g.files[0]));
    let name = slug(g.files.length > 1 && folder && folder !== "." ? folder : stem(g.files[0], g.sniffed.suffix));
    for (let i = 2; used.has(name); i++) name = `${name.replace(/-\d+$/, "")}-${i}`;
    used.add(name);
    out.push({ name, sniffed: g.sniffed, files: g.files, glob: await globFor(g.files, g.sniffed.suffix, baseDir) });
  }
  return out;
}
