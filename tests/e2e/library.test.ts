// The README's library examples: custom stages registered from code (a stream stage, a keyed
// stage), run through runPipeline and, for the keyed one, as a task plan with several partitions.
import { describe, expect, it } from "vitest";
import { mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { gunzipSync } from "node:zlib";
import { defineStage, keyedStage, loadPipeline, runPipeline, schema, STAGES, type KeyedForm } from "../../src/index.js";
import { planPhases } from "../../src/engine/plan.js";
import { runTask } from "../../src/engine/task.js";
import type { DocRecord } from "../../src/types.js";
import { ROOT, tempDir } from "./cli.js";

const quiet = { info() {}, warn() {}, error() {}, debug() {} };

describe("library use", () => {
  it("runs a pipeline with a stage of the user's own", async () => {
    STAGES["drop-attachments"] = defineStage({
      name: "drop-attachments",
      summary: "drops tickets whose text only points at an attachment",
      options: schema.obj({}),
      create: () =>
        async function* (records, ctx) {
          for await (const r of records) {
            if (/^see attached\.?$/i.test(r.text)) ctx.drop(r, "attachment-only");
            else yield r;
          }
        },
    });
    const dir = tempDir("lib");
    mkdirSync(join(dir, "d"));
    writeFileSync(join(dir, "d/t.jsonl"), ['{"text":"See attached."}', '{"text":"Wheel flat on car 12 reprofiled at Northfold."}'].join("\n") + "\n");
    writeFileSync(
      join(dir, "p.yaml"),
      "siftpack: 1\nsources: [{ name: t, files: d/*.jsonl, format: jsonl }]\nstages:\n  - drop-attachments: {}\n  - tokenize: {}\n  - pack: { length: 16 }\noutput: { dir: out }\n",
    );
    const p = await loadPipeline(join(dir, "p.yaml"));
    const { manifest } = await runPipeline(p, { log: quiet });
    expect(manifest.records).toMatchObject({ read: 2, kept: 1, dropped: 1, by_reason: { "attachment-only": 1 } });
    expect(manifest.splits.train.documents).toBe(1);
    delete STAGES["drop-attachments"];
  });

  it("runs a keyed stage of the user's own (README: the keyed form) with the same result on one partition or three", async () => {
    // README: begin
    // cap_per_group: keeps the first `max` records of every value of a meta field, in input order.
    interface CapOptions {
      field: string;
      max: number;
    }

    /** Any fixed string hash will do: records of one group must land in one partition, nothing more. */
    function partitionOf(group: string, partitions: number): number {
      let h = 0;
      for (let k = 0; k < group.length; k++) h = (Math.imul(h, 31) + group.charCodeAt(k)) >>> 0;
      return h % partitions;
    }

    const capForm: KeyedForm<CapOptions> = {
      kind: "keyed",
      steps: { partition: "cap-groups" },
      // Per unit of input (a file, or a part of one): each record with the field writes its row and
      // group into the group's partition.
      async collectors(o) {
        return {
          async unit(_u, out) {
            return {
              add(r) {
                const v = r.meta[o.field];
                if (v === undefined) return; // no group: never capped
                const g = String(v);
                return out.part("groups.jsonl", partitionOf(g, out.partitions)).write(JSON.stringify({ i: r.seq, g }) + "\n");
              },
              async finish() {},
            };
          },
          async close() {},
        };
      },
      // Per partition: units in build order and rows in order, so "first" means first in the input.
      async partition(o, p, files, out) {
        const seen = new Map<string, number>();
        for (let u = 0; u < files.units; u++) {
          for await (const line of files.lines("groups.jsonl", u, p)) {
            const { i, g } = JSON.parse(line) as { i: number; g: string };
            const n = (seen.get(g) ?? 0) + 1;
            seen.set(g, n);
            if (n > o.max) out.decide(u, i, { group: g, nth: n });
          }
        }
      },
      // Wherever the records are read next: a record with a decision leaves, with a reason.
      async applier() {
        return (r, d, ctx) => {
          if (d === undefined) return r;
          ctx.drop(r, "over-cap", d as Record<string, unknown>);
          return undefined;
        };
      },
    };

    STAGES["cap_per_group"] = defineStage({
      name: "cap_per_group",
      summary: "keeps the first `max` records of every value of a meta field",
      options: schema.obj({
        field: schema.field(schema.str({ nonEmpty: true }), { required: true }),
        max: schema.field(schema.num({ integer: true, min: 1 }), { required: true }),
      }),
      form: capForm,
      // Used as a plain stream, the same steps run over one unit and one partition.
      create: (o) => keyedStage(capForm, o, 1),
    });
    // README: end

    // The README shows this very code.
    const own = readFileSync(import.meta.filename, "utf8");
    const code = own.slice(own.indexOf("// README: begin\n") + 17, own.indexOf("    // README: end")).replace(/^ {4}/gm, "");
    const readme = readFileSync(join(ROOT, "README.md"), "utf8");
    const block = /```ts\nimport \{[^\n]*keyedStage[^\n]*\} from "siftpack";\n\n([\s\S]*?)```/.exec(readme);
    expect(block, "README: the keyed stage example").not.toBeNull();
    expect(block![1]).toBe(code);

    const dir = tempDir("lib-keyed");
    try {
      // Three files of fitters' notes; cars repeat within and across files, one note names no car.
      const cars = [[11, 12, 11, 13, 11, 14, undefined, 12], [13, 11, 12, 14, 13, 15, 11], [14, 12, 15, 13, 11, 14, 16, 12, 13]];
      mkdirSync(join(dir, "d"));
      const records: { id: string; car?: number }[] = [];
      cars.forEach((list, f) => {
        const lines = list.map((car, k) => {
          records.push({ id: `t:notes-${f}.jsonl:${k + 1}`, car });
          return JSON.stringify({ text: `Shift note ${k + 1} of sheet ${f + 1}: sander on car ${car ?? "unknown"} refilled at Kestrel Street.`, ...(car === undefined ? {} : { car }) });
        });
        writeFileSync(join(dir, `d/notes-${f}.jsonl`), lines.join("\n") + "\n");
      });
      // Records of one car land in one partition, and the cars spread over all three partitions.
      expect(new Set(cars.flat().filter((c) => c !== undefined).map((c) => partitionOf(String(c), 3))).size).toBe(3);
      const file = join(dir, "p.yaml");
      writeFileSync(
        file,
        "siftpack: 1\nsources: [{ name: t, files: d/*.jsonl, format: jsonl, meta: [car] }]\nstages:\n  - cap_per_group: { field: car, max: 2 }\n  - tokenize: {}\n  - pack: { length: 16 }\noutput: { dir: out }\n",
      );
      const counts = new Map<number, number>();
      const over = records.filter((r) => r.car !== undefined && counts.set(r.car, (counts.get(r.car) ?? 0) + 1).get(r.car)! > 2).map((r) => r.id);
      expect(over.length).toBeGreaterThan(5);

      // One build, every phase one task (one partition).
      const local = await runPipeline(await loadPipeline(file, { outDir: join(dir, "local") }), { log: quiet, workers: 1 });
      const ledger = (out: string) => gunzipSync(readFileSync(join(out, "ledger.jsonl.gz"))).toString("utf8");
      const lines = ledger(local.outDir).trim().split("\n").map((l) => JSON.parse(l));
      expect(lines.filter((l) => l.fate === "dropped").map((l) => [l.id, l.reason])).toEqual(over.map((id) => [id, "over-cap"]));
      expect(lines.find((l) => l.id === over[0]).detail).toEqual({ group: "11", nth: 3 });
      expect(local.manifest.records).toMatchObject({ read: records.length, dropped: over.length, by_reason: { "over-cap": over.length } });

      // The same build as a plan of three tasks per phase, every task run in turn: three partitions.
      const p = await loadPipeline(file, { outDir: join(dir, "tasks") });
      const plan = planPhases(p, 3);
      expect(plan.phases.find((ph) => ph.name === "cap-groups")?.tasks).toBe(3);
      let manifest;
      for (const ph of plan.phases) for (let i = 0; i < ph.tasks; i++) manifest = (await runTask(p, ph.name, i, { log: quiet, workers: 1, plan })).manifest ?? manifest;
      expect(manifest!.build_hash).toBe(local.manifest.build_hash);
      expect(ledger(join(dir, "tasks"))).toBe(ledger(local.outDir));

      // And as a plain stream stage.
      const o = { field: "car", max: 2 };
      const dropped: string[] = [];
      const stream = await STAGES["cap_per_group"].create(o, { baseDir: dir });
      async function* input(): AsyncGenerator<DocRecord> {
        for (const [k, r] of records.entries()) yield { id: r.id, source: "t", text: "x", meta: r.car === undefined ? {} : { car: r.car }, origin: { file: "f", line: k + 1 }, seq: k };
      }
      const kept: string[] = [];
      const ctx = { seed: 0, log: quiet, workDir: dir, addOutputFile() {}, count() {}, drop: (r: DocRecord) => dropped.push(r.id) };
      for await (const r of stream(input(), ctx)) kept.push(r.id);
      expect(dropped).toEqual(over);
      expect(kept).toEqual(records.map((r) => r.id).filter((id) => !over.includes(id)));
    } finally {
      delete STAGES["cap_per_group"];
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
