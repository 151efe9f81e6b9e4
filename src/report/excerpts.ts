// Short excerpts of given records for the report: found through the ledger, read again from the inputs, redacted as the pipeline redacts.
import { createReadStream } from "node:fs";
import { stat } from "node:fs/promises";
import { createGunzip } from "node:zlib";
import { createInterface } from "node:readline";
import { join, resolve } from "node:path";
import type { Manifest } from "../output/manifest.js";
import { readBuildInfo } from "../output/build-info.js";
import { readerFor, type Format } from "../sources/formats.js";
import { lineLimitBytes } from "../sources/lines.js";
import { isBad } from "../sources/row.js";
import { STAGES } from "../stages/index.js";
import type { Stage } from "../stages/stage.js";
import type { DocRecord, StageContext } from "../types.js";
import { stagesOf } from "./funnel.js";

export interface RecordRef {
  source: string;
  id: string;
}

/** An excerpt, or why there is none. */
export type Excerpt = { text: string } | { missing: string };

/**
 * Text-changing stages applied to an excerpt before it is shown: the report must not show what
 * the pipeline was told to redact, and normalized text is what went into the build.
 */
const TEXT_STAGES = new Set(["normalize", "redact"]);

const key = (r: RecordRef) => `${r.source}\u0000${r.id}`;

/** At most `max` characters, whitespace collapsed, cut at a word boundary. */
export function shorten(text: string, max: number): string {
  const flat = text.replace(/\s+/g, " ").trim();
  if (flat.length <= max) return flat;
  const cut = flat.slice(0, max);
  const space = cut.lastIndexOf(" ");
  return (space > max * 0.6 ? cut.slice(0, space) : cut).trimEnd() + " …";
}

async function where(dir: string, wanted: Set<string>): Promise<Map<string, { file: string; line: number }>> {
  const found = new Map<string, { file: string; line: number }>();
  const file = createReadStream(join(dir, "ledger.jsonl.gz"));
  const lines = createInterface({ input: file.pipe(createGunzip()), crlfDelay: Infinity });
  for await (const l of lines) {
    if (!l) continue;
    const e = JSON.parse(l) as { source: string; id?: string; file: string; line: number };
    if (e.id !== undefined && wanted.has(key(e as RecordRef))) {
      found.set(key(e as RecordRef), { file: e.file, line: e.line });
      if (found.size === wanted.size) break;
    }
  }
  lines.close();
  file.destroy();
  return found;
}

async function redactor(m: Manifest, baseDir: string): Promise<(text: string) => Promise<string>> {
  const stages: Stage[] = [];
  for (const s of stagesOf(m).filter((s) => TEXT_STAGES.has(s.name) && STAGES[s.name])) stages.push(await STAGES[s.name].create(s.options, { baseDir }));
  const ctx: StageContext = { seed: m.seed, log: { info() {}, warn() {}, error() {}, debug() {} }, drop() {}, workDir: baseDir, addOutputFile() {}, count() {} };
  return async (text) => {
    let records: AsyncIterable<DocRecord> = (async function* () {
      yield { id: "excerpt", source: "report", text, meta: {}, origin: { file: "", line: 0 }, seq: 0 };
    })();
    for (const st of stages) records = st(records, ctx);
    for await (const r of records) return r.text;
    return "";
  };
}

/**
 * Excerpts of `refs` (at most `max` characters each). The ledger gives each record's file and
 * line; the file is read again from where the build read it (build-info.json), if it is still
 * the same size, up to the rows needed. Reading stops when `deadline` (ms since the epoch) passes.
 */
export async function excerpts(dir: string, m: Manifest, refs: RecordRef[], o: { max: number; deadline: number }): Promise<Map<string, Excerpt>> {
  const out = new Map<string, Excerpt>();
  if (refs.length === 0) return out;
  const info = await readBuildInfo(dir);
  const none = (why: string) => new Map(refs.map((r) => [key(r), { missing: why }]));
  if (!info) return none("build-info.json is missing, so the inputs cannot be found");
  let at: Map<string, { file: string; line: number }>;
  try {
    at = await where(dir, new Set(refs.map(key)));
  } catch (err) {
    return none(`the ledger cannot be read: ${(err as Error).message}`);
  }
  const specs = new Map(((m.pipeline.resolved as { sources?: { name: string; format: Format; text: string; max_line_mb?: number }[] })?.sources ?? []).map((s) => [s.name, s]));
  const clean = await redactor(m, info.base_dir);
  // Group by file, so each file is read once, up to its last needed row.
  const byFile = new Map<string, { source: string; lines: Map<number, string[]> }>();
  for (const r of refs) {
    const w = at.get(key(r));
    if (!w) {
      out.set(key(r), { missing: "not in the ledger" });
      continue;
    }
    const f = byFile.get(w.file) ?? { source: r.source, lines: new Map() };
    f.lines.set(w.line, [...(f.lines.get(w.line) ?? []), key(r)]);
    byFile.set(w.file, f);
  }
  for (const [file, f] of byFile) {
    const keys = [...f.lines.values()].flat();
    const miss = (why: string) => keys.forEach((k) => out.set(k, { missing: why }));
    const spec = specs.get(f.source);
    const input = m.inputs.find((i) => i.source === f.source && i.path === file);
    const abs = resolve(info.base_dir, file);
    const size = await stat(abs).then((s) => s.size, () => -1);
    if (!spec) miss(`source ${f.source} is not in the pipeline`);
    else if (size < 0) miss(`${file} is no longer there`);
    else if (input && input.size !== size) miss(`${file} has changed since the build`);
    else if (Date.now() > o.deadline) miss("not looked up: the time for excerpts ran out");
    else {
      let left = f.lines.size;
      // The build's own line limit, so a line it read is not too long here.
      for await (const row of readerFor(spec.format)(abs, { maxRecordBytes: lineLimitBytes(spec.max_line_mb) })) {
        const want = f.lines.get(row.line);
        if (want && !isBad(row)) {
          const raw = row.fields[spec.format === "text" ? "text" : spec.text];
          const text = typeof raw === "string" ? shorten(await clean(raw), o.max) : undefined;
          for (const k of want) out.set(k, text === undefined ? { missing: "the text field is gone" } : { text });
          if (--left === 0) break;
        }
        if (Date.now() > o.deadline) break;
      }
      for (const k of keys) if (!out.has(k)) out.set(k, { missing: "not found in the input" });
    }
  }
  return out;
}

/** The field names the pipeline file gives its sources (text, id, meta): settings, not input text. */
export function configuredFields(m: Manifest): Set<string> {
  const sources = (m.pipeline.resolved as { sources?: { text?: string; id?: string; meta?: string[] }[] })?.sources ?? [];
  return new Set(["text", ...sources.flatMap((s) => [s.text, s.id, ...(s.meta ?? [])]).filter((n): n is string => typeof n === "string")]);
}

/**
 * An error message of an unreadable record with no input text left in it, for reports without
 * excerpts. Messages quote what they found (`duplicate id "T-1"`, or the start of the line in a
 * JSON parser's message), so everything from the first quote on is cut, unless the message's only
 * quoted part is one of `keep` (the pipeline's own field names, which siftpack puts in double quotes).
 */
export function withoutInputText(error: string, keep: Set<string>): string {
  const quotes = [...error.matchAll(/["'`]/g)].map((q) => q.index!);
  if (quotes.length === 0) return error;
  const [open, close] = quotes;
  if (quotes.length === 2 && error[open] === '"' && error[close] === '"' && keep.has(error.slice(open + 1, close))) return error;
  return error.slice(0, open).trimEnd() + " …";
}

export { key as refKey };
