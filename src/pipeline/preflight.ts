// Everything a run needs, checked before it starts and reported in one go: the pipeline file's keys
// and rules across keys, the input files, the protected files, the tokenizer files and the output
// folder. `plan` shows the result; `run` does the same checks before it writes anything.
import { createReadStream } from "node:fs";
import { Writable } from "node:stream";
import { pipeline } from "node:stream/promises";
import { createGunzip } from "node:zlib";
import { dirname, resolve } from "node:path";
import { SiftpackError, describeSystemError, type ErrorCode } from "../errors.js";
import { listFiles, readSourceFile, RecordMapper } from "../sources/source.js";
import { resolveProtected } from "../overlap/protected-set.js";
import { checkTokenizerFiles, encoderFor, type TokenizeOptions } from "../stages/tokenize.js";
import { unknownSpecials } from "../chat/template.js";
import { checkOutputPlace, checkReplaceable } from "../output/output-dir.js";
import { checkPipelineText, loadedPipeline, outDirOf, problemsMessage, readPipelineText, type LoadedPipeline } from "./load.js";
import type { Issue, Path } from "./schema.js";

export interface CheckedPipeline extends LoadedPipeline {
  /** Each source's files, relative to the pipeline file's folder, in build order. */
  inputs: Record<string, string[]>;
}

/** A problem found by looking at a file the pipeline names: where in the pipeline file, and the error a run would give. */
interface FileProblem {
  path: Path;
  error: SiftpackError;
}

const isText = (v: unknown): v is string => typeof v === "string" && v !== "";

/** Reads a protected file to its end (a .gz decompressed, as decontaminate reads it), so a file that cannot be read fails here. */
async function readThrough(file: string): Promise<void> {
  const sink = new Writable({ write: (_chunk, _enc, done) => done() });
  const raw = createReadStream(file);
  await (file.endsWith(".gz") ? pipeline(raw, createGunzip(), sink) : pipeline(raw, sink));
}

/** The message of a failed read: gzip errors as such, system errors in plain words. */
function readError(err: unknown): string {
  const code = (err as NodeJS.ErrnoException)?.code;
  return typeof code === "string" && code.startsWith("Z_") ? `corrupt gzip data: ${(err as Error).message}` : describeSystemError(err);
}

/** The files of every source that names a glob; a source whose glob fails is a problem at its `files` key. */
async function checkSources(config: CheckedPipeline["config"], baseDir: string, problems: FileProblem[]): Promise<Record<string, string[]>> {
  const inputs: Record<string, string[]> = {};
  const sources = Array.isArray(config.sources) ? config.sources : [];
  for (const [i, s] of sources.entries()) {
    if (s === null || typeof s !== "object" || !isText(s.name) || !isText(s.files)) continue;
    try {
      inputs[s.name] = await listFiles(s, baseDir);
    } catch (err) {
      if (!(err instanceof SiftpackError)) throw err;
      problems.push({ path: ["sources", i, "files"], error: err });
    }
  }
  return inputs;
}

/** Protected files of every decontaminate stage: each pattern matches something, each file reads to its end. */
async function checkProtected(config: CheckedPipeline["config"], baseDir: string, problems: FileProblem[]): Promise<void> {
  const stages = Array.isArray(config.stages) ? config.stages : [];
  for (const [k, s] of stages.entries()) {
    const against: unknown = s.name === "decontaminate" ? s.options?.against : undefined;
    if (!Array.isArray(against)) continue;
    for (const [j, pattern] of against.entries()) {
      if (!isText(pattern)) continue;
      const at: Path = ["stages", k, "decontaminate", "against", j];
      let files: string[];
      try {
        files = await resolveProtected([pattern], baseDir, "decontaminate");
      } catch (err) {
        if (!(err instanceof SiftpackError)) throw err;
        problems.push({ path: at, error: err });
        continue;
      }
      for (const rel of files) {
        await readThrough(resolve(baseDir, rel)).catch((err) =>
          problems.push({ path: at, error: new SiftpackError("SP_INPUT_MISSING", `decontaminate: cannot read protected file ${rel}: ${readError(err)}`, { cause: err }) }),
        );
      }
    }
  }
}

/** Tokenizer files, with the checks a run makes when it loads them (tokenizer-check.ts). */
function checkTokenizers(config: CheckedPipeline["config"], baseDir: string, issues: Issue[], problems: FileProblem[]): void {
  const stages = Array.isArray(config.stages) ? config.stages : [];
  for (const [k, s] of stages.entries()) {
    if (s.name === "tokenize" && s.options?.template && !s.options.train && !issues.some((i) => i.path[0] === "stages" && i.path[1] === k)) {
      // A template's [[name]]s are special tokens of this tokenizer (a file's problems are reported below).
      try {
        const enc = encoderFor(s.options as TokenizeOptions, baseDir);
        issues.push(...unknownSpecials(s.options.template, Object.keys(enc.specialTokens), ["stages", k, "tokenize", "template"]));
      } catch (err) {
        if (!(err instanceof SiftpackError)) throw err;
      }
    }
    if (s.name !== "tokenize" || !isText(s.options?.tokenizer)) continue;
    // Options the schema refused (a tokenizer beside an encoding or `train`) are reported already.
    if (issues.some((i) => i.path[0] === "stages" && i.path[1] === k)) continue;
    try {
      checkTokenizerFiles([s], baseDir);
    } catch (err) {
      if (!(err instanceof SiftpackError)) throw err;
      problems.push({ path: ["stages", k, "tokenize", "tokenizer"], error: err });
    }
  }
}

/** The output folder: not the pipeline's folder or one holding an input, and, if it exists, an earlier build. */
async function checkOutput(file: string, outDir: string, inputs: Record<string, string[]>, baseDir: string, problems: FileProblem[]): Promise<void> {
  try {
    await checkOutputPlace(outDir, file, Object.values(inputs).flatMap((list) => list.map((f) => resolve(baseDir, f))));
    await checkReplaceable(outDir);
  } catch (err) {
    // As the run words it when it creates the folder (a path through a file, a folder it may not read).
    const error = err instanceof SiftpackError ? err : new SiftpackError("SP_OUTPUT", `cannot create output directory ${outDir}: ${describeSystemError(err)}`, { cause: err });
    problems.push({ path: ["output", "dir"], error });
  }
}

/** Pipeline-file problems are exit 2 (the file is wrong); the others keep their own code (exit 1: a file is missing or unreadable). */
const PIPELINE_CODES: ReadonlySet<ErrorCode> = new Set(["SP_PIPELINE_FILE", "SP_PIPELINE_KEY"]);

/**
 * Loads the pipeline file and checks everything a run needs before it starts, reporting every
 * problem at once: keys and values (schema), rules across keys, every source's glob, every protected
 * file of decontaminate (it must read to its end), every tokenizer file, and the output folder. One
 * problem is thrown as the error a run would give; several as one error listing each with the place
 * in the pipeline file it concerns (SP_PIPELINE_KEY, exit 2, when any of them is in the pipeline
 * file itself; else the first one's code, exit 1). Reading the input files' records is left to the run.
 */
export async function checkPipeline(file: string, overrides: { outDir?: string } = {}): Promise<CheckedPipeline> {
  const checked = checkPipelineText(await readPipelineText(file), file);
  const { config, issues } = checked;
  const baseDir = dirname(resolve(file));
  const problems: FileProblem[] = [];
  const inputs = await checkSources(config, baseDir, problems);
  await checkProtected(config, baseDir, problems);
  checkTokenizers(config, baseDir, issues, problems);
  const dirOk = isText(config.output?.dir) && !issues.some((i) => i.path[0] === "output");
  if (dirOk || overrides.outDir) await checkOutput(file, outDirOf(file, config.output?.dir ?? "", overrides), inputs, baseDir, problems);

  if (issues.length === 0 && problems.length === 0) return { ...(await loadedPipeline(file, config, overrides)), inputs };
  const keyProblems = issues.length + problems.filter((p) => PIPELINE_CODES.has(p.error.code)).length;
  if (issues.length === 0 && problems.length === 1) throw problems[0].error;
  const lines = [...issues.map(checked.describe), ...problems.map((p) => checked.describe({ path: p.path, message: p.error.message }))];
  const total = lines.length;
  if (keyProblems === total) throw new SiftpackError("SP_PIPELINE_KEY", problemsMessage(file, total), { details: lines });
  const message =
    keyProblems === 0
      ? `${file}: ${total} problems with the files it names`
      : `${file}: ${total} problems: ${keyProblems} in the pipeline file, ${total - keyProblems} with the files it names`;
  throw new SiftpackError(keyProblems > 0 ? "SP_PIPELINE_KEY" : problems[0].error.code, message, { details: lines });
}

/** Files per source whose first row `plan` reads: enough to catch a wrong format or text field, bounded on corpora of many files. */
const FIRST_ROWS_OF = 20;

/**
 * What the first row of each source's first files says about the settings, for `plan`: a row the
 * format's reader cannot parse, or one without its text or id field, is quarantined by a run, and a
 * source where every row is like it fails the run on max_bad_fraction after reading everything.
 * Warnings, not problems: a run does build from such a file when the rest of it is good.
 */
export async function firstRowWarnings(p: CheckedPipeline): Promise<string[]> {
  const out: string[] = [];
  for (const source of p.config.sources) {
    for (const file of (p.inputs[source.name] ?? []).slice(0, FIRST_ROWS_OF)) {
      const rows = readSourceFile(source, p.baseDir, file, new RecordMapper(source));
      try {
        const first = await rows.next();
        const item = first.done ? undefined : first.value;
        if (item?.kind === "bad") out.push(`source "${source.name}": ${file}:${item.entry.line}: ${item.entry.error} (the first row; a run quarantines every row like it)`);
        else if (item?.kind === "truncated") out.push(`source "${source.name}": ${file} cannot be read: ${item.truncated.error}`);
      } catch (err) {
        if (!(err instanceof SiftpackError)) throw err;
        out.push(err.message);
      } finally {
        await rows.return(undefined);
      }
    }
  }
  return out;
}
