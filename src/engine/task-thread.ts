// Worker-thread entry for a local run's task threads (src/engine/task-threads.ts): rebuilds the
// run's plan once, then runs the tasks it is sent, one at a time, and reports their log lines,
// progress and markers to the run's thread.
import { parentPort, workerData } from "node:worker_threads";
import { BuildCache, cacheDirOf } from "../cache/build-cache.js";
import type { Logger } from "../types.js";
import { planPhases } from "./plan.js";
import { runTask } from "./task.js";
import { errorData, type TaskMessage, type TaskRequest, type TaskThreadInit } from "./task-threads.js";

if (!parentPort) throw new Error("task-thread.js must run in a worker thread");
const port = parentPort;
const init = workerData as TaskThreadInit;
const plan = planPhases(init.p, init.tasks);
plan.workDir = init.workDir;
const cache = new BuildCache(cacheDirOf(init.p.outDir), init.cache);

const post = (m: TaskMessage) => {
  try {
    port.postMessage(m);
  } catch {
    // A log object that cannot be cloned (a function in it) goes as its JSON.
    port.postMessage(JSON.parse(JSON.stringify(m)) as TaskMessage);
  }
};
const line = (level: keyof Logger) => (obj: object | string, msg?: string) => post({ t: "log", level, obj, msg });
const log: Logger = { info: line("info"), warn: line("warn"), error: line("error"), debug: line("debug") };

port.on("message", async (req: TaskRequest) => {
  try {
    const r = await runTask(init.p, req.phase, req.index, { log, workers: req.workers, bytesTotal: req.bytes, plan, buildCache: cache, units: init.units, onProgress: (b) => post({ t: "progress", current: b.current }) });
    post({ t: "done", done: r.done, used: cache.takeUsed() });
  } catch (err) {
    post({ t: "error", error: errorData(err), used: cache.takeUsed() });
  }
});
