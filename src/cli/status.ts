// `siftpack status WORKDIR`: tasks done, failed, running and pending per phase, read from the work directory alone.
import type { CommandModule } from "yargs";
import { readFile } from "node:fs/promises";
import { join } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import { phaseStates } from "../engine/workdir.js";

interface Args {
  workdir: string;
  json?: boolean;
}

export const statusCommand: CommandModule<object, Args> = {
  command: "status <workdir>",
  describe: "show the tasks of a cluster build: done, failed, running, pending per phase",
  builder: (y) => y.positional("workdir", { type: "string", demandOption: true }).option("json", { type: "boolean", describe: "print JSON" }),
  handler: async (args) => {
    const planPath = join(args.workdir, "plan.json");
    const plan = JSON.parse(
      await readFile(planPath, "utf8").catch((err) => {
        throw new SiftpackError("SP_WORK", `${planPath}: cannot read the task plan (${describeSystemError(err)}); no task of this build has started yet?`, { cause: err });
      }),
    ) as { pipeline: string; outDir: string; phases: { name: string; tasks: number }[] };
    const states = await phaseStates(args.workdir, plan.phases);
    if (args.json) {
      process.stdout.write(JSON.stringify({ pipeline: plan.pipeline, outDir: plan.outDir, phases: states }, null, 2) + "\n");
      return;
    }
    const rows = states.map((s) => {
      const n = (st: string) => s.tasks.filter((t) => t.state === st).length;
      return [s.phase, String(s.tasks.length), String(n("done")), String(n("failed") + n("stopped")), String(n("running")), String(n("pending"))];
    });
    const head = ["phase", "tasks", "done", "failed", "running", "pending"];
    const widths = head.map((h, c) => Math.max(h.length, ...rows.map((r) => r[c].length)));
    const fmt = (r: string[]) => r.map((v, c) => (c === 0 ? v.padEnd(widths[c]) : v.padStart(widths[c]))).join("  ") + "\n";
    let out = `${plan.pipeline} → ${plan.outDir}\n` + fmt(head) + rows.map(fmt).join("");
    for (const s of states)
      for (const t of s.tasks) {
        if (t.state === "failed") out += `failed: ${s.phase} task ${t.index}${t.host ? ` on ${t.host}` : ""}: ${t.error}\n  last log line: ${t.lastLog ?? "(none)"}\n`;
        if (t.state === "stopped") out += `stopped without finishing (killed?): ${s.phase} task ${t.index} on ${t.host}; run it again\n  last log line: ${t.lastLog ?? "(none)"}\n`;
        if (t.state === "running") out += `running (or stopped on its node): ${s.phase} task ${t.index}${t.host ? ` on ${t.host}` : ""}; last log line: ${t.lastLog ?? "(none)"}\n`;
      }
    process.stdout.write(out);
  },
};
