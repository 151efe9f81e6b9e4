// `siftpack report DIR [--out FILE]`: writes one self-contained HTML page about a build (by default beside it, DIR.report.html).
import { readFile, realpath, stat, writeFile } from "node:fs/promises";
import { basename, dirname, isAbsolute, join, relative, resolve } from "node:path";
import type { CommandModule } from "yargs";
import { SiftpackError, describeSystemError } from "../errors.js";
import { buildReport } from "../report/build.js";
import { isSiftpackFormat } from "../output/manifest.js";
import { isSiftpackReport, REPORT_NAME } from "../output/build-files.js";

interface Args {
  dir: string;
  out?: string;
  excerpts?: boolean;
}

/** A path as the user would type it: relative to the working directory when it lies below it. */
function relativeIfInside(path: string): string {
  const rel = relative(process.cwd(), path);
  return rel && !rel.startsWith("..") && !isAbsolute(rel) ? rel : path;
}

/** The nearest directory holding `path` (at any depth) whose manifest.json is a siftpack manifest. */
async function buildDirAbove(path: string): Promise<string | undefined> {
  for (let dir = dirname(path); ; dir = dirname(dir)) {
    const text = await readFile(join(dir, "manifest.json"), "utf8").catch(() => undefined);
    if (text !== undefined) {
      try {
        if (isSiftpackFormat(JSON.parse(text)?.format)) return dir;
      } catch {
        // Not JSON: some other tool's file of that name.
      }
    }
    if (dirname(dir) === dir) return undefined;
  }
}

/**
 * The rule for where a report may go: an existing file is replaced only when it is an earlier
 * siftpack report, and inside a build directory only DIR/report.html may be written, since any
 * other file there is one `siftpack verify` reports as not in the manifest.
 */
export async function checkReportTarget(out: string): Promise<void> {
  const st = await stat(out).catch((err) => (err.code === "ENOENT" ? undefined : Promise.reject(err)));
  if (st && !st.isFile()) throw new SiftpackError("SP_OUTPUT", `refusing to write the report to ${out}: it exists and is not a file`);
  if (st && !(await isSiftpackReport(out))) throw new SiftpackError("SP_OUTPUT", `refusing to overwrite ${out}: it is not a report written by siftpack (only an earlier report is replaced)`);
  // Where the file really is: a link into a build directory counts as that directory.
  const real = st ? await realpath(out) : join(await realpath(dirname(resolve(out))).catch(() => dirname(resolve(out))), basename(out));
  const build = await buildDirAbove(real);
  if (build && real !== join(build, REPORT_NAME))
    throw new SiftpackError("SP_OUTPUT", `refusing to write ${out}: it is inside the build directory ${build}, where only ${REPORT_NAME} may be added (siftpack verify reports any other file)`);
}

/**
 * Where the report goes without --out: beside the build directory, named after it. A rebuild
 * replaces the whole build directory, so a report inside it would vanish with the next run.
 */
export function defaultReportPath(dir: string): string {
  const abs = resolve(dir);
  return join(dirname(abs), `${basename(abs)}.report.html`);
}

export const reportCommand: CommandModule<object, Args> = {
  command: "report <dir>",
  describe: "write a self-contained HTML report of a build (charts, tables, provenance)",
  builder: (y) =>
    y
      .positional("dir", { type: "string", demandOption: true, describe: "build directory (holds manifest.json)" })
      .option("out", { type: "string", describe: `HTML file to write (default: DIR.report.html beside the build, which a rebuild leaves alone; DIR/${REPORT_NAME} is allowed too, but a rebuild removes it); an existing file is replaced only if it is an earlier report` })
      .option("excerpts", { type: "boolean", default: true, describe: "quote input text: the largest near-duplicate clusters and the errors of unreadable records (--no-excerpts: ids, files and line numbers only)" }),
  handler: async (args) => {
    const out = args.out ?? relativeIfInside(defaultReportPath(args.dir));
    await checkReportTarget(out).catch((err) => {
      if (err instanceof SiftpackError) throw err;
      throw new SiftpackError("SP_OUTPUT", `${out}: cannot check the report's target: ${describeSystemError(err)}`, { cause: err });
    });
    const html = await buildReport(args.dir, args.dir, { excerpts: args.excerpts });
    await writeFile(out, html).catch((err) => {
      throw new SiftpackError("SP_OUTPUT", `${out}: cannot write the report: ${describeSystemError(err)}`, { cause: err });
    });
    process.stdout.write(`wrote ${out} (${Math.round(Buffer.byteLength(html) / 1024)} KiB); open it in a browser\n`);
  },
};
