// Decontamination of an invented depot handbook whose every page ends with the same sentence, which the
// protected held-out pages end with too, through the real CLI: the run says loudly how much of train went
// and which n-grams did it (summary, log, manifest), `boilerplate_docs` spares the boilerplate but not a
// planted passage, and a build of separate task processes over files cut in parts gives the same bytes.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { outputFiles, siftpack, tempDir } from "./cli.js";

const BOILERPLATE = "This page belongs to the Kestrel Street depot handbook and is reissued whenever the fleet changes.";
const PASSAGE = "Before a car leaves the washing plant the fitter checks that both pantograph isolating handles are back in the running position.";
const PARTS = ["sander", "horn", "wiper", "door", "coupler", "headlamp"];
const PLANTED = [12, 47, 81];

let dir: string;
beforeAll(() => {
  dir = tempDir("decon-boilerplate");
  mkdirSync(join(dir, "data"));
  // 120 pages in three files; each page its own sentences, three of them holding the protected passage.
  for (let f = 0; f < 3; f++) {
    const lines: string[] = [];
    for (let k = 0; k < 40; k++) {
      const n = f * 40 + k;
      const own = `Car ${4700 + n} had its ${PARTS[n % 6]} looked at on shift ${n}, and the fitter wrote down what was found on road ${n % 9}.`;
      // A field no stage reads makes each file about 24 KB, so unit_mb 0.01 cuts it in parts.
      lines.push(JSON.stringify({ text: `${own} ${PLANTED.includes(n) ? PASSAGE : ""} ${BOILERPLATE}`, shift_log: `shift ${n} `.repeat(40) }));
    }
    writeFileSync(join(dir, "data", `pages-${f}.jsonl`), lines.join("\n") + "\n");
  }
  writeFileSync(join(dir, "data", "held-out.txt"), `Car 9001 is stabled on road four overnight. ${BOILERPLATE}\n\n${PASSAGE} ${BOILERPLATE}\n`);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** A pipeline file in <dir>/<name>/ (one depth for all, so paths in the manifest agree). */
function pipeline(name: string, decontaminate: string, cluster = ""): string {
  mkdirSync(join(dir, name), { recursive: true });
  const file = join(dir, name, "p.yaml");
  writeFileSync(
    file,
    [
      "siftpack: 1",
      "sources: [{ name: pages, files: ../data/pages-*.jsonl, format: jsonl }]",
      "stages:",
      "  - split: { holdout: { val: 0, test: 0 } }",
      `  - decontaminate: { against: ../data/held-out.txt${decontaminate} }`,
      "  - tokenize: {}",
      "  - pack: { length: 64 }",
      "output: { dir: out }",
      cluster,
    ].join("\n") + "\n",
  );
  return file;
}

describe("decontamination against format boilerplate, end to end", () => {
  it("by default drops every page and warns in the summary, the log and the manifest, naming the n-grams", () => {
    const file = pipeline("plain", "");
    const r = siftpack(["run", file]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toContain("decontaminate: 120 of 120 checked train records dropped (100.0%; every match in decontaminate.json)");
    expect(r.stdout).toContain('most frequent shared n-grams, in train records:\n      120  "belongs to the kestrel street depot handbook and is reissued whenever the fleet"\n');
    expect(r.stdout).toContain("WARNING: decontaminate dropped more than warn_share 5.0% of train. If the n-grams above are format boilerplate, set boilerplate_docs on the stage");
    const warned = r.stderr.split("\n").filter((l) => l.includes('"level":40')).map((l) => JSON.parse(l));
    expect(warned.map((w) => w.msg)).toContainEqual(expect.stringContaining("decontaminate: 120 of 120 checked training records dropped (100.0 %)"));
    const m = JSON.parse(readFileSync(join(dir, "plain", "out", "manifest.json"), "utf8"));
    expect(m.decontamination).toEqual([
      expect.objectContaining({ file: "decontaminate.json", action: "drop", checked: 120, dropped: 120, share: 1, warn_share: 0.05, above_warning: true }),
    ]);
    expect(m.decontamination[0].top_ngrams).toHaveLength(5);
    expect(m.decontamination[0].top_ngrams[0]).toEqual({ ngram: expect.stringContaining("kestrel street depot handbook"), records: 120 });
  });

  it("with boilerplate_docs keeps the pages that share only the boilerplate and drops the three holding the passage", () => {
    const file = pipeline("spared", ", boilerplate_docs: 10");
    const r = siftpack(["run", file]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toContain("decontaminate: 3 of 120 checked train records dropped (2.5%;");
    expect(r.stdout).toContain("ignored as boilerplate (in more than 10 train records): 4 n-grams; 117 records matched only those and were kept");
    expect(r.stdout).not.toContain("WARNING");
    const m = JSON.parse(readFileSync(join(dir, "spared", "out", "manifest.json"), "utf8"));
    expect(m.decontamination[0]).toMatchObject({ dropped: 3, boilerplate_docs: 10, ignored_ngrams: 4, boilerplate_only: 117, above_warning: false });
    expect(m.records.by_reason).toEqual({ decontaminated: 3 });
    const report = JSON.parse(readFileSync(join(dir, "spared", "out", "decontaminate.json"), "utf8"));
    expect(report.matches.map((x: { id: string }) => x.id)).toEqual(PLANTED.map((n) => `pages:pages-${Math.floor(n / 40)}.jsonl:${(n % 40) + 1}`));
    expect(report.matches[0].ngram).toBe(PASSAGE.replace(".", "").toLowerCase().split(" ").slice(0, 13).join(" "));
  });

  it("as separate task processes, 3 tasks per phase over files cut in parts, builds the same bytes", () => {
    const local = pipeline("local", ", boilerplate_docs: 10");
    expect(siftpack(["run", local, "--quiet"]).code).toBe(0);
    const file = pipeline("tasks", ", boilerplate_docs: 10", "cluster: { tasks: 3, unit_mb: 0.01 }");
    const plan = siftpack(["plan", file, "--tasks", "--json"]);
    expect(plan.code, plan.stderr).toBe(0);
    const phases = JSON.parse(plan.stdout).phases as { name: string; tasks: number }[];
    expect(phases.map((p) => p.name)).toContain("protected-ngrams");
    const units = /^# (\d+) units? of work/m.exec(siftpack(["plan", file, "--tasks"]).stdout);
    expect(Number(units?.[1])).toBeGreaterThan(3);
    for (const ph of phases)
      for (let i = 0; i < ph.tasks; i++) {
        const t = siftpack(["task", file, "--phase", ph.name, "--index", String(i), "--workers", "1", "--quiet"]);
        expect(t.code, `${ph.name} ${i}: ${t.stderr}`).toBe(0);
      }
    const a = outputFiles(join(dir, "local", "out"));
    const b = outputFiles(join(dir, "tasks", "out"));
    expect(Object.keys(b).sort()).toEqual(Object.keys(a).sort());
    for (const f of Object.keys(a)) expect(b[f], f).toBe(a[f]);
  }, 300_000);
});
