// What `siftpack plan` prints as settings is a pipeline file the schema accepts, and resolves to itself;
// figures derived from the settings (memory bounds, band probabilities) are printed apart, as comments.
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { parse } from "yaml";
import { parsePipeline } from "../../src/pipeline/load.js";
import { explainedStage } from "../../src/cli/plan.js";
import { demoCopy, siftpack } from "../e2e/cli.js";

/** The YAML document plan prints between its header comments and its comment blocks. */
const settingsOf = (stdout: string) => stdout.split("\n").filter((l) => !l.startsWith("#")).join("\n");

describe("plan's printed settings", () => {
  const dir = demoCopy();
  const demo = join(dir, "pipelines/demo.yaml");
  // Every stage whose explain() adds something, with the options that make it add the most.
  const all = join(dir, "pipelines/all.yaml");
  writeFileSync(
    all,
    readFileSync(demo, "utf8")
      .replace("pack: { length: 512, strategy: best-fit, emit: [positions, target_mask] }", "pack: { length: 256, strategy: best-fit, shuffle: true, shuffle_window: 512 }")
      // The manuals source (the demo's text source, last of its sources).
      .replace("    format: text\n", "    format: text\n    max_line_mb: 8\n"),
  );

  for (const [name, file] of [["demo", demo], ["every explained stage", all]] as const) {
    it(`${name}: pass the schema again without a problem, and resolve to what was printed`, () => {
      const r = siftpack(["plan", file]);
      expect(r.code, r.stderr).toBe(0);
      const printed = settingsOf(r.stdout);
      const again = join(dir, "pipelines", `printed-${name.length}.yaml`);
      writeFileSync(again, printed);
      // parsePipeline throws SP_PIPELINE_KEY naming every problem; none is expected.
      const config = parsePipeline(printed, again);
      expect(config.stages.map((s) => s.name)).toEqual(parse(printed).stages.map((s: object) => Object.keys(s)[0]));
      const r2 = siftpack(["plan", again]);
      expect(r2.code, r2.stderr).toBe(0);
      // The same settings (an explicit default moves to its place in the schema's key order).
      expect(parse(settingsOf(r2.stdout))).toEqual(parse(printed));
    });
  }

  it("prints memory bounds and band figures as comments, not as keys", () => {
    const r = siftpack(["plan", all]);
    expect(settingsOf(r.stdout)).not.toMatch(/shuffle_memory_mb|buffer_memory_mb|candidate_probability|band_threshold/);
    expect(r.stdout).toMatch(/^# derived from the settings above \(figures, not keys of a pipeline file\):$/m);
    expect(r.stdout).toMatch(/^# {3}11\. pack:\n# {5}buffer_memory_mb: 10\n# {5}shuffle_memory_mb: 1$/m);
    // A default made explicit stays a setting.
    expect(settingsOf(r.stdout)).toMatch(/^ {6}buffer_docs: 10000$/m);
    expect(settingsOf(r.stdout)).toMatch(/^ {4}max_line_mb: 8$/m);
    const json = JSON.parse(siftpack(["plan", all, "--json"]).stdout);
    expect(json.stages[10].pack).not.toHaveProperty("shuffle_memory_mb");
    expect(json.derived).toContainEqual({ stage: 11, name: "pack", buffer_memory_mb: 10, shuffle_memory_mb: 1 });
  });

  it("explainedStage keeps keys the stage's schema accepts and moves the rest", () => {
    const options = parsePipeline(readFileSync(all, "utf8"), all).stages.at(-1)!;
    expect(explainedStage(options)).toEqual({
      settings: expect.objectContaining({ strategy: "best-fit", buffer_docs: 10000 }),
      figures: { buffer_memory_mb: 10, shuffle_memory_mb: 1 },
    });
  });
});
