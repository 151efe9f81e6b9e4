// Reads a pipeline file (YAML, or JSON), validates it and reports every problem with file:line:col.
import { readFile } from "node:fs/promises";
import { dirname, isAbsolute, resolve, relative } from "node:path";
import { isMap, isSeq, LineCounter, parseDocument, visit, type Document, type Node } from "yaml";
import { SiftpackError, describeSystemError } from "../errors.js";
import { checkPipelineRules, pipelineSchema, type PipelineConfig } from "./config.js";
import type { Issue, Path } from "./schema.js";
import { canonicalJson } from "../lib/canonical-json.js";
import { hex64, loadHasher, xxh64String } from "../lib/hash.js";

export interface LoadedPipeline {
  /** The path as given. */
  file: string;
  /** Directory that relative paths in the file are resolved against. */
  baseDir: string;
  config: PipelineConfig;
  /** Absolute output directory. */
  outDir: string;
  /** XXH64 of the canonical JSON of the resolved configuration. */
  hash: string;
}

/** `stages[2].dedup.threshold` */
export function formatPath(path: Path): string {
  let s = "";
  for (const p of path) s += typeof p === "number" ? `[${p}]` : s ? `.${p}` : p;
  return s || "(top level)";
}

/** Finds the node at `path`, walking back to the closest existing ancestor; `atKey` points at the key itself. */
function locate(doc: Document, path: Path, atKey: boolean): Node | undefined {
  let node: unknown = doc.contents;
  let best = node as Node | undefined;
  for (let i = 0; i < path.length; i++) {
    const step = path[i];
    if (isMap(node)) {
      const pair = node.items.find((p) => (p.key as any)?.value === step || p.key === step);
      if (!pair) return best;
      if (atKey && i === path.length - 1) return pair.key as Node;
      node = pair.value;
    } else if (isSeq(node) && typeof step === "number") {
      node = node.items[step];
    } else return best;
    if (node && (node as Node).range) best = node as Node;
  }
  return best;
}

export function positionOf(doc: Document, lc: LineCounter, issue: Issue): string {
  const node = locate(doc, issue.path, issue.atKey ?? false);
  const offset = node?.range?.[0] ?? 0;
  const { line, col } = lc.linePos(offset);
  return `${line}:${col}`;
}

/** Pipeline text checked against the schema and the rules across keys, every problem kept. */
export interface CheckedText {
  /** The resolved configuration; where there are issues, only partly resolved (a refused value may be missing or empty). */
  config: PipelineConfig;
  issues: Issue[];
  /** "p.yaml:3:5: sources[0].files: …": an issue (or a problem found later at a key's path) as a user reads it. */
  describe(issue: Issue): string;
}

/** Parses pipeline text and checks it; throws SiftpackError (SP_PIPELINE_FILE) only when it is not YAML or JSON at all. */
export function checkPipelineText(text: string, file: string): CheckedText {
  const lc = new LineCounter();
  const doc = parseDocument(text, { lineCounter: lc, prettyErrors: false, uniqueKeys: true });
  if (doc.errors.length > 0) {
    const lines = doc.errors.map((e) => {
      const { line, col } = lc.linePos(e.pos[0]);
      return `${file}:${line}:${col}: ${e.message.split("\n")[0]}`;
    });
    throw new SiftpackError("SP_PIPELINE_FILE", `${file}: not valid YAML or JSON`, { details: lines });
  }
  const value = toValue(doc, lc, file);
  const issues: Issue[] = [];
  const config = pipelineSchema.check(value, [], issues);
  // The rules across keys run on what could be resolved, so one report holds every problem.
  checkPipelineRules(config, issues);
  return { config, issues, describe: (i) => `${file}:${positionOf(doc, lc, i)}: ${formatPath(i.path)}: ${i.message}` };
}

/** "p.yaml: 3 problems in the pipeline file". */
export function problemsMessage(file: string, n: number): string {
  return `${file}: ${n} problem${n > 1 ? "s" : ""} in the pipeline file`;
}

/** Parses and validates pipeline text; throws SiftpackError listing every problem. */
export function parsePipeline(text: string, file: string): PipelineConfig {
  const { config, issues, describe } = checkPipelineText(text, file);
  if (issues.length > 0) throw new SiftpackError("SP_PIPELINE_KEY", problemsMessage(file, issues.length), { details: issues.map(describe) });
  return config;
}

/** Aliases may repeat a value, but not nest into an exponentially large document (an "alias bomb"). */
const MAX_ALIAS_COUNT = 100;

/** The document as plain values; an alias bomb is a fault of the file (exit 2), told at its first alias. */
function toValue(doc: Document, lc: LineCounter, file: string): unknown {
  try {
    return doc.toJS({ maxAliasCount: MAX_ALIAS_COUNT });
  } catch (err) {
    // yaml throws a ReferenceError ("Excessive alias count …") when aliases expand past the limit.
    if (!(err instanceof ReferenceError) || !/alias/i.test(err.message)) throw err;
    let first: { offset: number; name: string } | undefined;
    visit(doc, {
      Alias(_, node) {
        first = { offset: node.range?.[0] ?? 0, name: node.source };
        return visit.BREAK;
      },
    });
    const { line, col } = lc.linePos(first?.offset ?? 0);
    throw new SiftpackError(
      "SP_PIPELINE_FILE",
      `${file}:${line}:${col}: aliases${first ? ` (*${first.name} and others)` : ""} expand into more than ${MAX_ALIAS_COUNT} copies of their values; write the values out instead of nesting aliases`,
      { cause: err },
    );
  }
}

/** The pipeline file's text; SP_PIPELINE_FILE when it cannot be read. */
export async function readPipelineText(file: string): Promise<string> {
  try {
    return await readFile(file, "utf8");
  } catch (err) {
    throw new SiftpackError("SP_PIPELINE_FILE", `${file}: cannot read the pipeline file: ${describeSystemError(err)}`, { cause: err });
  }
}

/** The absolute output directory: --out, else output.dir relative to the pipeline file. */
export function outDirOf(file: string, dir: string, overrides: { outDir?: string } = {}): string {
  return overrides.outDir ? resolve(overrides.outDir) : isAbsolute(dir) ? dir : resolve(dirname(resolve(file)), dir);
}

export async function loadPipeline(file: string, overrides: { outDir?: string } = {}): Promise<LoadedPipeline> {
  return loadedPipeline(file, parsePipeline(await readPipelineText(file), file), overrides);
}

/** A valid configuration with its paths resolved and its hash. */
export async function loadedPipeline(file: string, config: PipelineConfig, overrides: { outDir?: string } = {}): Promise<LoadedPipeline> {
  const baseDir = dirname(resolve(file));
  const outDir = outDirOf(file, config.output.dir, overrides);
  await loadHasher();
  // The output directory is not part of the hash: the same data built elsewhere is the same build;
  // nor is how the work is cut into tasks (`cluster`), which never changes a byte of the result.
  const hashed = { ...config, output: { ...config.output, dir: undefined }, cluster: undefined };
  return { file, baseDir, config, outDir, hash: hex64(xxh64String(canonicalJson(hashed))) };
}

/** A path for messages and manifests: relative to the current directory when inside it. */
export function displayPath(p: string): string {
  const r = relative(process.cwd(), p);
  return r && !r.startsWith("..") && !isAbsolute(r) ? r : p;
}
