// `siftpack report --out`: never overwrites a file that is not an earlier report, nor adds a stray file to a
// build; `--no-excerpts` keeps all input text out of the page, the errors of unreadable lines included.
import { existsSync, mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { siftpack, tempDir } from "./cli.js";
import { withoutInputText } from "../../src/report/excerpts.js";

let dir: string;
let out: string;

// Lines whose starts a JSON parser quotes in its message, and an id repeated: all input text.
const LINES = [
  JSON.stringify({ ref: "TK-1", body: "Door sensor on car 14 sticks after the wash cycle at the Harrowgate depot." }),
  "Quillmoor depot: pantograph sparks reported by the late crew",
  JSON.stringify({ ref: "TK-2", body: "Flat wheel on car 22 makes a knocking noise on the eastern loop." }),
  '{"ref": "TK-3", "body": Brakeworth yard says the sander is empty}',
  JSON.stringify({ ref: "TK-1", body: "Tram 9 heater fan rattles at low speed near the Ostley terminus." }),
  JSON.stringify({ ref: "TK-4", body: "Wiper blade on car 31 leaves streaks in heavy rain at the Ostley terminus." }),
];
const SECRETS = ["Quillmoor", "pantograph sparks", "Brakeworth", "sander", '"TK-1"', "TK-1"];

beforeAll(() => {
  dir = tempDir("report-out");
  writeFileSync(join(dir, "tickets.jsonl"), LINES.join("\n") + "\n");
  writeFileSync(
    join(dir, "p.yaml"),
    "siftpack: 1\nmax_bad_fraction: 0.9\nsources:\n  - { name: tickets, files: tickets.jsonl, format: jsonl, text: body, id: ref }\nstages:\n  - tokenize: { encoding: gpt2 }\n  - pack: { length: 32 }\noutput: { dir: build }\n",
  );
  const run = siftpack(["run", join(dir, "p.yaml"), "--quiet"]);
  expect(run.code, run.stderr).toBe(0);
  out = join(dir, "build");
});

describe("report --no-excerpts", () => {
  it("quotes no input text, not even the starts of quarantined lines; the default does", () => {
    const q = readFileSync(join(out, "quarantine.jsonl"), "utf8");
    // The premise: the quarantine file itself quotes input (a repeated id; a malformed line's start
    // no longer: the reader cuts the parser's echo of it).
    expect(q).toContain('duplicate id \\"TK-1\\"');
    expect(q).not.toContain("Quillmoor");
    const withText = join(dir, "with.html");
    expect(siftpack(["report", out, "--out", withText]).code).toBe(0);
    expect(readFileSync(withText, "utf8")).toContain("TK-1");
    const plain = join(dir, "plain.html");
    const r = siftpack(["report", out, "--out", plain, "--no-excerpts"]);
    expect(r.code, r.stderr).toBe(0);
    const html = readFileSync(plain, "utf8");
    for (const s of SECRETS) expect(html, s).not.toContain(s);
    // What stays: file, line and the kind of error.
    expect(html).toMatch(/<code>tickets\.jsonl<\/code><\/th><td[^>]*>2<\/td><td[^>]*>malformed JSON: unexpected token …/);
    expect(html).toContain("duplicate id …");
  });

  it("keeps the pipeline's own field names and cuts from the first other quote", () => {
    const keep = new Set(["body", "ref"]);
    expect(withoutInputText('field "body" is missing', keep)).toBe('field "body" is missing');
    expect(withoutInputText('duplicate id "TK-1"', keep)).toBe("duplicate id …");
    expect(withoutInputText(`malformed JSON: unexpected token 'Q', "Quillmoor "... is not valid JSON`, keep)).toBe("malformed JSON: unexpected token …");
    expect(withoutInputText('invalid UTF-8 in field "body" (file line 3)', keep)).toBe('invalid UTF-8 in field "body" (file line 3)');
    expect(withoutInputText('duplicate id "body"x"', keep)).toBe("duplicate id …");
    expect(withoutInputText("empty file", keep)).toBe("empty file");
  });
});

describe("report --out", () => {
  const refused = (args: string[]) => {
    const r = siftpack(["report", out, ...args]);
    expect(r.code).toBe(1);
    expect(r.stderr.trimEnd().split("\n")).toHaveLength(1);
    return r.stderr;
  };

  it("refuses the build's own files, leaving them as they were", () => {
    const manifest = readFileSync(join(out, "manifest.json"), "utf8");
    expect(refused(["--out", join(out, "manifest.json")])).toBe(`siftpack: error: refusing to overwrite ${join(out, "manifest.json")}: it is not a report written by siftpack (only an earlier report is replaced)\n`);
    expect(readFileSync(join(out, "manifest.json"), "utf8")).toBe(manifest);
    expect(refused(["--out", join(out, "train")])).toContain("it exists and is not a file");
  });

  it("refuses a new file inside a build directory other than report.html", () => {
    expect(refused(["--out", join(out, "train/report.html")])).toBe(
      `siftpack: error: refusing to write ${join(out, "train/report.html")}: it is inside the build directory ${out}, where only report.html may be added (siftpack verify reports any other file)\n`,
    );
    expect(refused(["--out", join(out, "depot-report.html")])).toContain("where only report.html may be added");
    expect(existsSync(join(out, "depot-report.html"))).toBe(false);
  });

  it("refuses any other existing file, and replaces an earlier report", () => {
    const other = join(dir, "rota.html");
    writeFileSync(other, "<!doctype html><title>depot rota</title>");
    expect(refused(["--out", other])).toContain(`refusing to overwrite ${other}: it is not a report written by siftpack`);
    expect(readFileSync(other, "utf8")).toBe("<!doctype html><title>depot rota</title>");
    mkdirSync(join(dir, "reports"));
    const mine = join(dir, "reports/tickets.html");
    for (let i = 0; i < 2; i++) expect(siftpack(["report", out, "--out", mine, "--no-excerpts"]).code).toBe(0);
    // The default place, twice, and verify still passes.
    for (let i = 0; i < 2; i++) expect(siftpack(["report", out, "--no-excerpts"]).code).toBe(0);
    expect(siftpack(["verify", out]).code).toBe(0);
  });
});
