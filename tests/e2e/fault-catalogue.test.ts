// The fault catalogue: every kind of bad input, bad pipeline file and fault of the machine that siftpack
// answers, as one table. Each row sets up its case, runs the CLI and is held to the same rules: the exit
// code; one line on stderr (plus indented detail lines where the row says so), no stack, no internal
// error; where a build finished, ledger fates that add up to the manifest's counts and a build that
// verifies; where it did not, the build already in that place left as it was and still verifying.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { spawnSync } from "node:child_process";
import { cpSync, existsSync, mkdirSync, readFileSync, readdirSync, rmSync, statSync, writeFileSync } from "node:fs";
import { hostname } from "node:os";
import { dirname, join } from "node:path";
import { gunzipSync, gzipSync } from "node:zlib";
import { PretokenCounter, tokenizerJson, trainBpe } from "../../src/tokenizer/index.js";
import { ROOT, blocksOf, demoCopy, outputFiles, siftpack, tempDir } from "./cli.js";

// ---------------------------------------------------------------------------------------------------
// Invented inputs: tickets of a fictional tram depot network.

const ticket = (id: string, body: string) => JSON.stringify({ ticket_id: id, depot: "Quayside", body });
const body = (n: number) => `Door sensor on car ${n} replaced at the Quayside depot after the fault was traced to a loose connector.`;
const GOOD = Array.from({ length: 6 }, (_, i) => ticket(`T-${i + 1}`, body(i + 1)));
const lines = (...rows: string[]) => rows.join("\n") + "\n";

/** A folder with `data/…` files and p.yaml over them (output `out`); `source` is added to the source's keys. */
interface Project {
  dir: string;
  pipeline: string;
  out: string;
}
function project(files: Record<string, string | Buffer>, opts: { source?: string; format?: string; top?: string; tokenize?: string; outDir?: string } = {}): Project {
  const dir = tempDir("fault");
  for (const [name, content] of Object.entries(files)) {
    mkdirSync(dirname(join(dir, name)), { recursive: true });
    writeFileSync(join(dir, name), content);
  }
  const format = opts.format ?? "jsonl";
  const fields = format === "csv" ? "text: body, id: note_id" : "text: body, id: ticket_id";
  writeFileSync(
    join(dir, "p.yaml"),
    `siftpack: 1\nmax_bad_fraction: 0.9\n${opts.top ?? ""}sources:\n  - { name: tickets, files: "data/*", format: ${format}, ${fields}${opts.source ?? ""} }\n` +
      `stages:\n  - tokenize: ${opts.tokenize ?? "{ encoding: gpt2, eos: true }"}\n  - pack: { length: 32 }\noutput: { dir: ${opts.outDir ?? "out"} }\n`,
  );
  return { dir, pipeline: join(dir, "p.yaml"), out: join(dir, opts.outDir ?? "out") };
}

/** A tokenizer file from the project's own trainer on a few depot sentences, edited by `edit`. */
const TOKENIZER = (() => {
  const c = new PretokenCounter();
  c.add("Door sensor on car 12 replaced at Quayside depot. Door sensor on car 14 replaced at Northfold depot.");
  c.add("Pantograph carbon strips checked on tram 7; wheel flats found on bogie 2.");
  return tokenizerJson(trainBpe(c.counts, { vocabSize: 320, minFrequency: 1, specialTokens: ["<|endoftext|>"] }));
})();
const tokenizerWith = (edit: (j: any) => void) => {
  const j = JSON.parse(TOKENIZER);
  edit(j);
  return JSON.stringify(j);
};

// ---------------------------------------------------------------------------------------------------
// The shared demo build (rows that need only a finished build copy it), and helpers.

let demo: string; // a demo copy, built: demo/build/demo
let demoBuild: string;
let demoFiles: Record<string, string>;

beforeAll(() => {
  demo = demoCopy();
  // --keep-work: the work folder stays beside it, so that the full-disk row can size its disk from it.
  const r = siftpack(["run", join(demo, "pipelines/demo.yaml"), "--quiet", "--keep-work"]);
  expect(r.code, r.stderr).toBe(0);
  demoBuild = join(demo, "build/demo");
  demoFiles = outputFiles(demoBuild);
});

/** A copy of the shared demo build at `to` (a previous good build in a row's place). */
function copyDemoBuild(to: string): string {
  mkdirSync(dirname(to), { recursive: true });
  cpSync(demoBuild, to, { recursive: true });
  return to;
}

/** Every file under dir, as base64 by path. */
function filesOf(dir: string): Record<string, string> {
  const out: Record<string, string> = {};
  for (const e of readdirSync(dir, { withFileTypes: true, recursive: true }))
    if (e.isFile()) out[join(e.parentPath, e.name).slice(dir.length + 1)] = readFileSync(join(e.parentPath, e.name)).toString("base64");
  return out;
}


// Mounts (a read-only folder, a full disk) need root: probed once; their rows are skipped without it.
const mounts: string[] = [];
const probe = tempDir("mount-probe");
const canMount = spawnSync("mount", ["-t", "tmpfs", "-o", "size=1m", "tmpfs", probe]).status === 0 && spawnSync("umount", [probe]).status === 0;
function tmpfs(kib: number): string {
  const dir = tempDir("fault-mnt");
  expect(spawnSync("mount", ["-t", "tmpfs", "-o", `size=${kib}k`, "tmpfs", dir]).status).toBe(0);
  mounts.push(dir);
  return dir;
}
/** A read-only bind of the folder onto itself, undone by unmounting it (as in output-safety.test.ts). */
function readOnly(dir: string): () => void {
  expect(spawnSync("mount", ["--bind", dir, dir]).status).toBe(0);
  if (spawnSync("mount", ["-o", "remount,bind,ro", dir]).status !== 0) {
    spawnSync("umount", [dir]);
    throw new Error(`cannot make ${dir} read-only`);
  }
  return () => expect(spawnSync("umount", [dir]).status).toBe(0);
}
afterAll(() => {
  for (const dir of mounts.reverse()) spawnSync("umount", [dir]);
});

// ---------------------------------------------------------------------------------------------------
// The table.

interface Case extends Partial<Project> {
  /** For commands on something else than the pipeline: a build, a file. */
  target?: string;
  env?: Record<string, string>;
  /** RLIMIT_FSIZE for the command, in KiB (bash's ulimit -f); node ignores SIGXFSZ, so a write past it fails with EFBIG. */
  fileSizeKib?: number;
  /** A folder the command must leave byte for byte as it was; when it is a build, it must still verify. */
  untouched?: string;
  /** More assertions of the row. */
  check?: (r: { stdout: string; stderr: string }) => void;
  /** Undoes what setup did to the machine (a read-only mount). */
  cleanup?: () => void;
}

interface Row {
  name: string;
  setup: () => Case;
  args: (c: Case) => string[];
  code: number;
  /**
   * Exit code ≠ 0: the error line after "siftpack: error: ". Exit code 0: each quarantine entry as
   * "file:line: error" (null: none, and stderr empty; undefined: not pinned by this row).
   */
  message: RegExp | null | undefined;
  /** Exit code 0: the one warning the command logs on stderr (its message); without it stderr stays empty. */
  warning?: RegExp;
  /** The indented lines under the error line, in order. */
  details?: RegExp[];
  /** The command wrote a build (`out`): its ledger adds up to its manifest and it verifies. */
  finished: boolean;
  /** The row mounts a file system (root only). */
  mount?: boolean;
  /** Set while the behaviour is not in the code yet: the row is skipped, saying why. */
  pending?: string;
}

const run = (c: Case) => ["run", c.pipeline!];

const ROWS: Row[] = [
  // Bad input: quarantined with file, line and error; the build goes on.
  {
    name: "a malformed JSON line",
    setup: () => project({ "data/a.jsonl": lines(...GOOD.slice(0, 2), '{"ticket_id": "T-90", "body": "the lathe log stops her', ...GOOD.slice(2)) }),
    args: run,
    code: 0,
    message: /^data\/a\.jsonl:3: malformed JSON: /,
    finished: true,
  },
  {
    name: "invalid UTF-8, named by its byte offset in the line",
    setup: () => {
      const head = '{"ticket_id": "T-91", "depot": "Quayside", "body": "sander hopper ';
      expect(Buffer.byteLength(head)).toBe(66);
      return project({ "data/a.jsonl": Buffer.concat([Buffer.from(lines(...GOOD.slice(0, 2))), Buffer.from(head), Buffer.from([0xff]), Buffer.from(' empty"}\n'), Buffer.from(lines(...GOOD.slice(2)))]) });
    },
    args: run,
    code: 0,
    message: /^data\/a\.jsonl:3: invalid UTF-8 at byte offset 66$/,
    finished: true,
  },
  {
    name: "a byte order mark at the start of the file",
    setup: () => {
      const p = project({ "data/a.jsonl": Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from(lines(...GOOD))]) });
      return { ...p, check: () => expect(ledgerOf(p.out)[0]).toMatchObject({ id: "T-1", fate: "kept" }) };
    },
    args: run,
    code: 0,
    message: null,
    finished: true,
  },
  {
    name: "a CSV row with the wrong number of fields",
    setup: () =>
      project({ "data/notes.csv": `note_id,depot,body\nN1,Quayside,"${body(7)}"\nN2,Quayside,"${body(8)}",extra\nN3,Northfold,"${body(9)}"\n` }, { format: "csv" }),
    args: run,
    code: 0,
    message: /^data\/notes\.csv:2: .*expected 3 fields, got 4/,
    finished: true,
  },
  {
    name: "a record without its text field",
    setup: () => project({ "data/a.jsonl": lines(...GOOD.slice(0, 2), JSON.stringify({ ticket_id: "T-92", depot: "Quayside" }), ...GOOD.slice(2)) }),
    args: run,
    code: 0,
    message: /^data\/a\.jsonl:3: field "body" is missing$/,
    finished: true,
  },
  {
    name: "an empty file",
    setup: () => project({ "data/a.jsonl": lines(...GOOD), "data/b.jsonl": "" }),
    args: run,
    code: 0,
    message: /^data\/b\.jsonl:0: empty file$/,
    finished: true,
  },
  {
    name: "a line longer than max_line_mb",
    setup: () => project({ "data/a.jsonl": lines(...GOOD, ticket("T-99", "Pantograph carbon strip worn on car 31. ".repeat(80))) }, { source: ", max_line_mb: 0.002" }),
    args: run,
    code: 0,
    // 0.002 MiB is 2097 bytes.
    message: /^data\/a\.jsonl:7: line longer than 2097 bytes$/,
    finished: true,
  },
  {
    name: "a cut .jsonl.gz",
    setup: () => {
      const gz = gzipSync(Buffer.from(lines(...Array.from({ length: 300 }, (_, i) => ticket(`T-${100 + i}`, body(i))))));
      const p = project({ "data/a.jsonl": lines(...GOOD), "data/cut.jsonl.gz": gz.subarray(0, gz.length >> 1) });
      return { ...p, untouched: copyDemoBuild(p.out) };
    },
    args: run,
    code: 1,
    message: /^(?=.*truncated)(?=.*tickets)(?=.*data\/cut\.jsonl\.gz)(?=.*accept_truncated)/,
    finished: false,
  },
  {
    name: "a cut .jsonl.gz with accept_truncated: true on its source",
    setup: () => {
      const gz = gzipSync(Buffer.from(lines(...Array.from({ length: 300 }, (_, i) => ticket(`T-${100 + i}`, body(i))))));
      const p = project({ "data/a.jsonl": lines(...GOOD), "data/cut.jsonl.gz": gz.subarray(0, gz.length >> 1) }, { source: ", accept_truncated: true" });
      return {
        ...p,
        check: () => {
          expect(ledgerOf(p.out).filter((l) => l.fate === "truncated")).toEqual([expect.objectContaining({ file: "data/cut.jsonl.gz" })]);
          expect(manifestOf(p.out).records.truncated_files).toBe(1);
        },
      };
    },
    args: run,
    code: 0,
    // The file's readable rows are built (those are counted as read); the file itself is one ledger line.
    message: undefined,
    warning: /(?=.*truncated)(?=.*"tickets")(?=.*data\/cut\.jsonl\.gz)/,
    finished: true,
  },

  // The pipeline file: exit 2 before anything is written; what was built before stays.
  {
    name: "many typos in a pipeline file, all reported at once with a close match",
    setup: () => {
      const dir = tempDir("typos");
      writeFileSync(
        join(dir, "p.yaml"),
        "siftpack: 1\nsources:\n  - { name: tickets, files: a.jsonl, fromat: jsonl, text: body }\nstages:\n  - tokenise: {}\n  - dedup: { method: minhash, treshold: 0.8 }\n  - pack: { length: 32 }\noutput: { dir: out, shards: 3 }\n",
      );
      return { dir, pipeline: join(dir, "p.yaml") };
    },
    args: (c) => ["plan", c.pipeline!],
    code: 2,
    message: /p\.yaml: 6 problems: 5 in the pipeline file, 1 with the files it names$/,
    // Each with file:line:col, the key and a close match (the lists of allowed keys are not pinned);
    // then the files the pipeline names (a.jsonl was never written), checked in the same go.
    details: [
      /^.*p\.yaml:3:38: sources\[0\]\.fromat: unknown key "fromat" \(did you mean "format"\?\); allowed: name, files, format, /,
      /^.*p\.yaml:3:5: sources\[0\]\.format: missing required key "format" \(one of jsonl \| json \| csv \| tsv \| text \| parquet\)$/,
      /^.*p\.yaml:5:5: stages\[0\]\.tokenise: unknown stage "tokenise" \(did you mean "tokenize"\?\); stages: /,
      /^.*p\.yaml:6:31: stages\[1\]\.dedup\.treshold: unknown key "treshold" \(did you mean "threshold"\?\); allowed: /,
      /^.*p\.yaml:8:21: output\.shards: unknown key "shards" \(did you mean "shard_blocks"\?\); allowed: dir, shard_blocks$/,
      /^.*p\.yaml:3:29: sources\[0\]\.files: source "tickets": no file matches "a\.jsonl"$/,
    ],
    finished: false,
  },
  {
    name: "a run whose pipeline names a missing protected file and a missing input: every problem before anything is written",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD) });
      writeFileSync(p.pipeline, readFileSync(p.pipeline, "utf8").replace("stages:\n", "  - { name: extra, files: more/*.jsonl, format: jsonl }\nstages:\n  - split: {}\n  - decontaminate: { against: [eval/gone.txt] }\n"));
      return { ...p, check: () => expect(existsSync(join(p.dir, ".out.partial")) || existsSync(join(p.dir, ".out.cache"))).toBe(false) };
    },
    args: run,
    code: 1,
    message: /p\.yaml: 2 problems with the files it names$/,
    details: [/^.*p\.yaml:5:\d+: sources\[1\]\.files: source "extra": no file matches "more\/\*\.jsonl"$/, /^.*p\.yaml:8:\d+: stages\[1\]\.decontaminate\.against\[0\]: decontaminate: no file matches "eval\/gone\.txt" \(relative to .*\)$/],
    finished: false,
  },
  {
    name: "a YAML alias bomb",
    setup: () => {
      const dir = tempDir("bomb");
      const rows = ["a: &a [tram, tram, tram, tram, tram, tram, tram, tram, tram]"];
      for (const [k, prev] of [["b", "a"], ["c", "b"], ["d", "c"], ["e", "d"], ["f", "e"]]) rows.push(`${k}: &${k} [${Array(9).fill(`*${prev}`).join(", ")}]`);
      writeFileSync(join(dir, "p.yaml"), `siftpack: 1\n${rows.join("\n")}\noutput: { dir: out }\n`);
      return { dir, pipeline: join(dir, "p.yaml"), untouched: copyDemoBuild(join(dir, "out")) };
    },
    args: run,
    code: 2,
    message: /p\.yaml:3:8: aliases \(\*a and others\) expand into more than 100 copies of their values; write the values out instead of nesting aliases$/,
    finished: false,
  },
  {
    name: "a stop-word language without a list",
    setup: () => {
      const dir = tempDir("stop-language");
      // The input exists, so the language is the one problem.
      writeFileSync(join(dir, "a.jsonl"), '{"text":"the tram left the depot"}\n');
      writeFileSync(join(dir, "p.yaml"), "siftpack: 1\nsources:\n  - { name: tickets, files: a.jsonl, format: jsonl }\nstages:\n  - filter: { stop_words: { language: cy } }\n  - tokenize: {}\n  - pack: { length: 32 }\noutput: { dir: out }\n");
      return { dir, pipeline: join(dir, "p.yaml") };
    },
    args: (c) => ["plan", c.pipeline!],
    code: 2,
    message: /p\.yaml: 1 problem in the pipeline file$/,
    details: [/^.*p\.yaml:5:\d+: stages\[0\]\.filter\.stop_words\.language: expected auto or a language code with a stop-word list \(e\.g\. en, de, fr, ja, zh\), got "cy" \(did you mean "ca"\?\)$/],
    finished: false,
  },
  {
    name: "a mixture that names a source that is not there, beside a weight",
    setup: () => project({ "data/a.jsonl": lines(...GOOD) }, { source: ", weight: 2", top: "mixture: { shares: { tikets: 1 } }\n" }),
    args: (c) => ["plan", c.pipeline!],
    code: 2,
    message: /p\.yaml: 3 problems in the pipeline file$/,
    details: [
      /^.*p\.yaml:\d+:\d+: sources\[0\]\.weight: source "tickets" has a weight and the pipeline has a mixture; use one: the mixture's shares, or weights without a mixture$/,
      /^.*p\.yaml:\d+:\d+: mixture\.shares\.tikets: mixture\.shares names source "tikets", which is not a source \(did you mean "tickets"\?\); the sources are "tickets"$/,
      /^.*p\.yaml:\d+:\d+: mixture\.shares: mixture\.shares gives no share to "tickets"; give every source \(or a group holding it\) a share, 0 to leave it out of train$/,
    ],
    finished: false,
  },
  {
    name: "a mixture budget that needs more than max_epochs of a source",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD) }, { top: "mixture: { train_tokens: 100000, shares: { tickets: 1 } }\n" });
      return { ...p, untouched: copyDemoBuild(p.out) };
    },
    args: run,
    code: 1,
    message: /p\.yaml: a train budget of 100000 tokens needs more than max_epochs 16 of "tickets": "tickets" has \d+ train tokens for a share of 1 \(100000 tokens\), [\d.]+ epochs; lower mixture\.train_tokens or that share, add data, or raise mixture\.max_epochs$/,
    finished: false,
  },
  {
    name: "a protected file for decontaminate that does not exist",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD) });
      writeFileSync(p.pipeline, readFileSync(p.pipeline, "utf8").replace("stages:\n", "stages:\n  - decontaminate: { against: protected/eval.txt }\n"));
      return { ...p, untouched: copyDemoBuild(p.out) };
    },
    args: run,
    code: 1,
    message: /decontaminate: no file matches "protected\/eval\.txt" \(relative to .*\)$/,
    finished: false,
  },
  ...(
    [
      ["an id of 2^40", tokenizerWith((j) => (j.model.vocab["Ġdepot"] = 2 ** 40)), /vocab entry "Ġdepot" has id 1099511627776, above the largest id 4294967295$/],
      ["an id of 4e9", tokenizerWith((j) => (j.added_tokens[0].id = 4_000_000_000)), /added token "<\|endoftext\|>" has id 4000000000, but the file has only \d+ ids: /],
      ["a duplicate id", tokenizerWith((j) => (j.model.vocab["Ġdepot"] = j.model.vocab["e"])), /vocab entries "e" and "Ġdepot" both have id \d+$/],
      ["a merge of an unknown token", tokenizerWith((j) => (j.model.merges[3] = ["Ġtram", "shed"])), /merge 3 \["Ġtram","shed"\] uses a token missing from the vocab: "Ġtram"$/],
      ["a WordPiece model", tokenizerWith((j) => (j.model = { type: "WordPiece", unk_token: "[UNK]", vocab: { "[UNK]": 0, depot: 1 } })), /unsupported model type "WordPiece"; only byte-level "BPE" is supported$/],
      ["truncated JSON", TOKENIZER.slice(0, TOKENIZER.length >> 1), /not JSON: /],
      ["no such file", undefined, /no such file or directory$/],
    ] as const
  ).map(
    ([what, content, why]): Row => ({
      name: `a tokenizer file with ${what}`,
      setup: () => {
        const p = project({ "data/a.jsonl": lines(...GOOD), ...(content === undefined ? {} : { "tok.json": content }) }, { tokenize: "{ tokenizer: tok.json, eos: true }" });
        return { ...p, untouched: copyDemoBuild(p.out) };
      },
      args: run,
      code: 2,
      message: new RegExp(`^tokenizer file .*tok\\.json: ${why.source.replace(/^\^/, "")}`),
      finished: false,
    }),
  ),
  {
    name: "plan prints only keys the schema accepts: its settings are a valid pipeline file",
    setup: () => {
      const dir = demoCopy();
      const pipeline = join(dir, "pipelines/demo.yaml");
      return {
        dir,
        pipeline,
        check: (r) => {
          const printed = join(dir, "pipelines/printed.yaml");
          writeFileSync(printed, r.stdout.split("\n").filter((l) => !l.startsWith("#")).join("\n"));
          const again = siftpack(["plan", printed]);
          expect(again.stderr).toBe("");
          expect(again.code).toBe(0);
        },
      };
    },
    args: (c) => ["plan", c.pipeline!],
    code: 0,
    message: null,
    finished: false,
  },

  // The output folder: only an earlier build is replaced, never the pipeline's or an input's folder.
  {
    name: "an output folder whose manifest.json is not siftpack's",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD) });
      const app = join(p.dir, "timetable-app");
      mkdirSync(app);
      writeFileSync(join(app, "manifest.json"), JSON.stringify({ name: "tram-timetable", start_url: "/" }));
      writeFileSync(join(app, "app.js"), "console.log('next tram in 4 minutes');\n");
      return { ...p, target: app, untouched: app };
    },
    args: (c) => ["run", c.pipeline!, "--out", c.target!],
    code: 1,
    message: /^refusing to replace .*timetable-app: its manifest\.json is not a siftpack manifest \(it has no format, not "siftpack\/2"\), so it is not a siftpack output; choose a new or empty output directory$/,
    finished: false,
  },
  {
    name: "the pipeline file's own folder as output",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD) }, { outDir: "." });
      return { ...p, untouched: p.dir };
    },
    args: run,
    code: 1,
    message: /^refusing to build into .*: it is the pipeline file's directory, and a build replaces its output directory whole; set output\.dir \(or --out\) to a folder of its own, such as build\/NAME$/,
    finished: false,
  },
  {
    name: "an output folder that contains an input file",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD) });
      return { ...p, target: join(p.dir, "data"), untouched: join(p.dir, "data") };
    },
    args: (c) => ["run", c.pipeline!, "--out", c.target!],
    code: 1,
    message: /^refusing to build into .*\/data: it contains the input file .*\/data\/a\.jsonl, and a build replaces its output directory whole; /,
    finished: false,
  },
  {
    name: "a second run into the same output",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD) });
      copyDemoBuild(p.out);
      // The lock of a run that is still going: this test's own process stands for it (a live pid on this
      // host is all siftpack can know of a run; output-safety.test.ts holds a real one).
      writeFileSync(join(p.dir, ".out.lock"), JSON.stringify({ pid: process.pid, host: hostname(), started: "2026-12-05T06:00:00.000Z" }));
      return { ...p, untouched: p.out };
    },
    args: run,
    code: 1,
    message: new RegExp(`^.*/out is being built by another run \\(pid ${process.pid} on ${hostname()}, since 2026-12-05T06:00:00\\.000Z\\); wait for it to finish, or remove .*/\\.out\\.lock if that run is gone$`),
    finished: false,
  },
  {
    name: "a read-only output folder",
    mount: true,
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD) });
      const mnt = tmpfs(16 << 10);
      const out = join(mnt, "notes");
      expect(siftpack(["run", p.pipeline, "--out", out, "--quiet"]).code).toBe(0);
      return { ...p, target: out, untouched: out, cleanup: readOnly(mnt) };
    },
    args: (c) => ["run", c.pipeline!, "--out", c.target!],
    code: 1,
    message: /^cannot write the lock file .*\/\.notes\.lock beside output directory .*\/notes: read-only file system; build on a writable file system with --out$/,
    finished: false,
  },
  {
    name: "a full disk",
    mount: true,
    setup: () => {
      // Room for one demo build with its cache and work folder, not for a second beside it (rebuild.test.ts).
      const mnt = tmpfs(4 * (blocksOf(join(demo, "build")) + 16));
      const out = join(mnt, "demo");
      expect(siftpack(["run", "pipelines/demo.yaml", "--out", out, "--quiet"]).code).toBe(0);
      return { target: out, untouched: out };
    },
    // --no-cache: every unit is computed again (a cache hit only adds a second name for a file).
    args: (c) => ["run", "pipelines/demo.yaml", "--out", c.target!, "--no-cache"],
    code: 1,
    message: /no space left on device; free some space there, or build elsewhere with --out$/,
    finished: false,
  },

  // Faults of the process.
  {
    name: "kill -9 in the pack phase, then a rerun: the same bytes as an uninterrupted build",
    setup: () => {
      const dir = demoCopy();
      const out = copyDemoBuild(join(dir, "build/demo"));
      const killed = siftpack(["run", join(dir, "pipelines/demo.yaml"), "--no-cache"], { env: { SIFTPACK_CRASH_AT: "records:40" } });
      expect(killed.signal).toBe("SIGKILL");
      expect(existsSync(join(dir, "build/.demo.run/pack/task-0.started.json"))).toBe(true);
      expect(existsSync(join(dir, "build/.demo.run/pack/task-0.done.json"))).toBe(false);
      // The previous build is as it was after the kill.
      expect(outputFiles(out)).toEqual(demoFiles);
      return { dir, pipeline: join(dir, "pipelines/demo.yaml"), out, check: () => expect(outputFiles(out)).toEqual(demoFiles) };
    },
    // --force: the previous build in place is up to date, and the rerun must resume the killed one, not skip it.
    args: (c) => [...run(c), "--force"],
    code: 0,
    // The demo's own two bad records are in its quarantine file: the bytes are compared whole instead.
    message: undefined,
    // The killed run's lock is left behind; its pid is gone, so the rerun takes it over.
    warning: /^taking over the lock .*\/build\/\.demo\.lock of run pid \d+ on .*, which is no longer running$/,
    finished: true,
  },
  {
    name: "a failing task whose log cannot be written: the task's own error is told",
    setup: () => {
      // A cluster build of one task per phase, run by hand, with too many bad records: its last task fails.
      const p = project({ "data/a.jsonl": lines(...GOOD, "{not json", "{nor this") }, { top: "cluster: { tasks: 1, work_dir: work }\n" });
      writeFileSync(p.pipeline, readFileSync(p.pipeline, "utf8").replace("max_bad_fraction: 0.9", "max_bad_fraction: 0.1"));
      tasksBeforeAssemble(p.pipeline);
      // The task's log is 200 bytes short of the file size limit: its first line fits, the failure's line does not.
      const log = join(p.dir, "work/logs/assemble-0.log");
      writeFileSync(log, "#".repeat(64 * 1024 - 201) + "\n");
      return { ...p, fileSizeKib: 64, check: () => expect(statSync(log).size).toBe(64 * 1024) };
    },
    args: (c) => ["task", c.pipeline!, "--phase", "assemble", "--index", "0", "--quiet"],
    code: 1,
    message: /^2 of 8 input records \(25\.0 %\) were quarantined, more than max_bad_fraction 0\.1; see .*quarantine\.jsonl$/,
    finished: false,
  },

  {
    name: "a cluster build whose output is the pipeline file's folder: its last task refuses",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD) }, { top: "cluster: { tasks: 1, work_dir: work }\n", outDir: "." });
      // `plan` refuses this output itself, so the phases are listed from a copy naming another output (they do not depend on it).
      const listed = join(p.dir, "listed.yaml");
      writeFileSync(listed, readFileSync(p.pipeline, "utf8").replace("dir: . }", "dir: out }"));
      tasksBeforeAssemble(p.pipeline, listed);
      return { ...p, untouched: join(p.dir, "data") };
    },
    args: (c) => ["task", c.pipeline!, "--phase", "assemble", "--index", "0", "--quiet"],
    code: 1,
    message: /^refusing to build into .*: it is the pipeline file's directory, and a build replaces its output directory whole; /,
    finished: false,
  },

  // verify: every problem named, exit 1.
  {
    name: "verify: a deleted shard",
    setup: () => {
      const dir = copyDemoBuild(join(tempDir("deleted"), "demo"));
      rmSync(join(dir, "train/00000-000001.tokens.npy"));
      return { target: dir };
    },
    args: (c) => ["verify", c.target!],
    code: 1,
    message: /\/demo: 1 of \d+ files do not match the manifest$/,
    details: [/^train\/00000-000001\.tokens\.npy: cannot read: no such file or directory$/],
    finished: false,
  },
  {
    name: "verify: a flipped byte in the ledger",
    setup: () => {
      const dir = copyDemoBuild(join(tempDir("flipped"), "demo"));
      const ledger = readFileSync(join(dir, "ledger.jsonl.gz"));
      ledger[ledger.length >> 1] ^= 0x01;
      writeFileSync(join(dir, "ledger.jsonl.gz"), ledger);
      return { target: dir };
    },
    args: (c) => ["verify", c.target!],
    code: 1,
    message: /\/demo: 1 of \d+ files do not match the manifest$/,
    details: [/^ledger\.jsonl\.gz: xxh64 [0-9a-f]{16}, manifest says [0-9a-f]{16}$/],
    finished: false,
  },
  {
    name: "verify: an extra file in train/",
    setup: () => {
      const dir = copyDemoBuild(join(tempDir("extra"), "demo"));
      writeFileSync(join(dir, "train/depot-rota.npy"), "not a shard");
      return { target: dir };
    },
    args: (c) => ["verify", c.target!],
    code: 1,
    message: /\/demo: 1 file is not in the manifest$/,
    details: [/^train\/depot-rota\.npy: not in the manifest: a file the build did not write$/],
    finished: false,
  },
  {
    name: "verify: a count edited in the manifest",
    setup: () => {
      const dir = copyDemoBuild(join(tempDir("edited"), "demo"));
      const text = readFileSync(join(dir, "manifest.json"), "utf8");
      const edited = text.replace(/"kept": (\d+)/, (_, n) => `"kept": ${Number(n) + 1}`);
      expect(edited).not.toBe(text);
      writeFileSync(join(dir, "manifest.json"), edited);
      return { target: dir };
    },
    args: (c) => ["verify", c.target!],
    code: 1,
    message: /\/demo: 1 of \d+ files do not match the manifest$/,
    details: [/^manifest\.json: edited since the build: its content hashes to [0-9a-f]{16}, manifest_xxh64 says [0-9a-f]{16}$/],
    finished: false,
  },

  // report: never over a build's own files; --no-excerpts quotes no input.
  {
    name: "report --out onto a build's manifest.json",
    setup: () => {
      const dir = copyDemoBuild(join(tempDir("report-onto"), "demo"));
      return { target: dir, untouched: dir };
    },
    args: (c) => ["report", c.target!, "--out", join(c.target!, "manifest.json")],
    code: 1,
    message: /^refusing to overwrite .*\/demo\/manifest\.json: it is not a report written by siftpack \(only an earlier report is replaced\)$/,
    finished: false,
  },
  {
    name: "report --no-excerpts quotes no input text",
    setup: () => {
      const secrets = ["Quillmoor", "Brakeworth", "TK-1"];
      const p = project({
        "data/a.jsonl": lines(
          ...GOOD,
          "Quillmoor depot: pantograph sparks reported by the late crew",
          '{"ticket_id": "TK-3", "body": Brakeworth yard says the sander is empty}',
          ticket("TK-1", body(21)),
          ticket("TK-1", body(22)),
        ),
      });
      expect(siftpack(["run", p.pipeline, "--quiet"]).code).toBe(0);
      const html = join(p.dir, "report.html");
      return {
        ...p,
        target: html,
        untouched: p.out,
        check: () => {
          const page = readFileSync(html, "utf8");
          for (const s of secrets) expect(page, s).not.toContain(s);
          expect(page).toContain("a.jsonl");
        },
      };
    },
    args: (c) => ["report", c.out!, "--out", c.target!, "--no-excerpts"],
    code: 0,
    message: null,
    finished: false,
  },

  // Reading a build back: decoding with the right tokenizer, and the origins index.
  {
    name: "encode --decode: an id past the vocabulary of the default encoding",
    setup: () => {
      const file = join(tempDir("ids"), "ids.json");
      writeFileSync(file, "[9906, 100256]");
      return { target: file };
    },
    args: (c) => ["encode", "--decode", c.target!],
    code: 2,
    message: /^--decode: entry 1 of the list: 100256 is not below 50257, the vocabulary size of gpt2 \(the default\); name the tokenizer the ids come from: --build DIR \(a build's own\), --encoding NAME \(gpt2, r50k_base, p50k_base, cl100k_base, o200k_base\) or --tokenizer FILE$/,
    finished: false,
  },
  {
    name: "inspect: the tokenizer file the build's pipeline named is gone",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD), "tok.json": TOKENIZER }, { tokenize: "{ tokenizer: tok.json, eos: true }" });
      expect(siftpack(["run", p.pipeline, "--quiet"]).code).toBe(0);
      rmSync(join(p.dir, "tok.json"));
      return { ...p, untouched: p.out };
    },
    args: (c) => ["inspect", c.out!, "--split", "train", "--block", "0"],
    code: 2,
    message: /^.*\/out was built with the tokenizer file tok\.json@[0-9a-f]{16}, but .*\/tok\.json \(the pipeline's tokenizer file\) is gone: pass it with --tokenizer FILE$/,
    finished: false,
  },
  {
    name: "inspect --tokenizer: a file other than the one the build used",
    setup: () => {
      const p = project({ "data/a.jsonl": lines(...GOOD), "tok.json": TOKENIZER, "other.json": TOKENIZER + " " }, { tokenize: "{ tokenizer: tok.json, eos: true }" });
      expect(siftpack(["run", p.pipeline, "--quiet"]).code).toBe(0);
      return { ...p, target: join(p.dir, "other.json"), untouched: p.out };
    },
    args: (c) => ["inspect", c.out!, "--split", "train", "--block", "0", "--tokenizer", c.target!],
    code: 2,
    message: /^.*\/other\.json is not the tokenizer .*\/out was built with \(the build used tok\.json@[0-9a-f]{16}; this file is other\.json@[0-9a-f]{16}\)$/,
    finished: false,
  },
  {
    name: "inspect: a shard's origins index is damaged",
    setup: () => {
      const dir = copyDemoBuild(join(tempDir("origins"), "demo"));
      const m = JSON.parse(readFileSync(join(dir, "manifest.json"), "utf8"));
      const rel = m.splits.val.shards[0].origins;
      writeFileSync(join(dir, rel), '{"row":0,"segment":1,\n');
      return { target: dir };
    },
    args: (c) => ["inspect", c.target!, "--split", "val", "--block", "0"],
    code: 1,
    message: /^.*\/demo\/val\/00000-000000\.origins\.jsonl: line 1: not JSON \(.+\)$/,
    finished: false,
  },
];

/** Runs every task of a cluster pipeline (one per phase) but the last, assemble, as a scheduler would. */
function tasksBeforeAssemble(pipeline: string, listedFrom = pipeline): void {
  const phases: string[] = JSON.parse(siftpack(["plan", "--tasks", "--json", listedFrom]).stdout).phases.map((ph: { name: string }) => ph.name);
  expect(phases.at(-1)).toBe("assemble");
  for (const phase of phases.slice(0, -1)) {
    const r = siftpack(["task", pipeline, "--phase", phase, "--index", "0", "--quiet"]);
    expect(r.code, r.stderr).toBe(0);
  }
}

// ---------------------------------------------------------------------------------------------------
// Reading a build.

interface LedgerLine {
  id?: string;
  file?: string;
  fate: string;
}
const ledgerOf = (out: string): LedgerLine[] =>
  gunzipSync(readFileSync(join(out, "ledger.jsonl.gz")))
    .toString("utf8")
    .split("\n")
    .filter(Boolean)
    .map((l) => JSON.parse(l));
const manifestOf = (out: string) => JSON.parse(readFileSync(join(out, "manifest.json"), "utf8"));
const quarantineOf = (out: string): string[] => {
  const path = join(out, "quarantine.jsonl");
  if (!existsSync(path)) return [];
  return readFileSync(path, "utf8")
    .split("\n")
    .filter(Boolean)
    .map((l) => JSON.parse(l))
    .map((q) => `${q.file}:${q.line}: ${q.error}`);
};

/** The CLI, with a file size limit when the row sets one. */
function cli(args: string[], c: Case) {
  if (c.fileSizeKib === undefined) return siftpack(args, { cwd: c.dir, env: c.env });
  const r = spawnSync("bash", ["-c", `ulimit -f ${c.fileSizeKib}; exec "$0" "$@"`, process.execPath, join(ROOT, "bin/siftpack.js"), ...args], {
    cwd: c.dir ?? ROOT,
    encoding: "utf8",
    env: { ...process.env, SIFTPACK_LOG: "warn", ...c.env },
  });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr, signal: r.signal };
}

const ready = (r: Row) => !r.pending && (!r.mount || canMount);

describe("the fault catalogue", () => {
  it.each(ROWS.filter(ready))("$name", (row) => {
    const c = row.setup();
    const before = c.untouched ? filesOf(c.untouched) : undefined;
    const r = (() => {
      try {
        return cli(row.args(c), c);
      } finally {
        c.cleanup?.();
      }
    })();
    expect(r.signal).toBeNull();
    expect(r.code, r.stderr).toBe(row.code);
    expect(r.stderr).not.toMatch(/\n\s+at |internal error/);

    if (row.code !== 0) {
      // One line, then the row's indented detail lines.
      const [first, ...rest] = r.stderr.split("\n");
      expect(rest.pop()).toBe("");
      expect(first.startsWith("siftpack: error: "), first).toBe(true);
      expect(first.slice("siftpack: error: ".length)).toMatch(row.message!);
      expect(rest.length, r.stderr).toBe(row.details?.length ?? 0);
      for (const [i, d] of (row.details ?? []).entries()) {
        expect(rest[i].startsWith("  "), rest[i]).toBe(true);
        expect(rest[i].slice(2)).toMatch(d);
      }
    } else {
      // Quiet, or the one warning the row expects (a JSON log line).
      if (row.warning) {
        const logged = r.stderr.split("\n").filter(Boolean);
        expect(logged, r.stderr).toHaveLength(1);
        expect(JSON.parse(logged[0])).toMatchObject({ level: 40, msg: expect.stringMatching(row.warning) });
      } else if (row.message !== undefined) expect(r.stderr).toBe("");
      // A build tells bad records in its quarantine file.
      if (row.finished && row.message !== undefined) {
        const quarantined = quarantineOf(c.out!);
        if (row.message === null) expect(quarantined).toEqual([]);
        else {
          expect(quarantined).toHaveLength(1);
          expect(quarantined[0]).toMatch(row.message);
        }
      }
    }

    if (row.finished) {
      const m = manifestOf(c.out!);
      const fates: Record<string, number> = {};
      for (const l of ledgerOf(c.out!)) fates[l.fate] = (fates[l.fate] ?? 0) + 1;
      const { kept = 0, dropped = 0, quarantined = 0, truncated = 0, ...other } = fates;
      expect(other).toEqual({});
      expect({ kept, dropped, quarantined, read: kept + dropped + quarantined }).toEqual({ kept: m.records.kept, dropped: m.records.dropped, quarantined: m.records.quarantined, read: m.records.read });
      expect(truncated).toBe(m.records.truncated_files ?? 0);
      const v = siftpack(["verify", c.out!]);
      expect(v.code, v.stderr).toBe(0);
    }
    if (c.untouched) {
      expect(filesOf(c.untouched)).toEqual(before);
      if (existsSync(join(c.untouched, "manifest.json")) && manifestOf(c.untouched).format?.startsWith("siftpack/")) {
        const v = siftpack(["verify", c.untouched]);
        expect(v.code, v.stderr).toBe(0);
      }
    }
    c.check?.(r);
  });

  // Rows waiting for code that is not there yet, and rows that need root to mount a file system.
  const waiting = ROWS.filter((r) => !ready(r));
  if (waiting.length > 0) it.skip.each(waiting.map((r) => ({ name: `${r.name} (${r.pending ?? "cannot mount a file system here"})` })))("$name", () => {});
});
