// Kubernetes launch files for a task plan: one Indexed Job manifest per phase and a submit.sh that runs them in order.
//
// Fields are those of the Kubernetes batch/v1 Job API (from memory of the API reference; completionMode
// Indexed is stable since Kubernetes 1.24). backoffLimitPerIndex is newer and absent from older clusters,
// so only backoffLimit is used. An Indexed Job sets JOB_COMPLETION_INDEX in each pod, which `siftpack task`
// reads when --index is absent.
import { posix } from "node:path";
import { stringify } from "yaml";
import { SiftpackError } from "../errors.js";
import { checkPlanForLaunch, commentLine, firstPhaseArgument, phaseNumber, shellCommand, shellQuote, type LaunchFile } from "./launch-file.js";
import type { TaskPlan } from "../engine/plan-types.js";

export interface KubernetesOptions {
  /** How to invoke siftpack inside the image, e.g. `["node", "/app/bin/siftpack.js"]` or `["siftpack"]`. */
  command: string[];
  image: string;
  /** The PersistentVolumeClaim holding the shared work directory, the pipeline file and the data. */
  claim: string;
  /** Where the claim is mounted in every pod; the plan's paths must lie under it. */
  mountPath: string;
  /** Pods of one phase running at once (at most the phase's task count). */
  parallelism: number;
  /** CPU request per pod, a Kubernetes quantity such as "2" or "500m". */
  cpu: string;
  /** How long submit.sh waits for one phase, a kubectl duration such as "6h". */
  waitTimeout: string;
  /** Pod failures, over all indexes of a phase, before its Job fails (default 3). */
  backoffLimit?: number;
}

/**
 * Tasks are idempotent, so retrying a pod is safe, but a task that fails on its data fails again on
 * every retry: a few retries cover lost nodes without running a broken task many times. (Kubernetes'
 * own default is 6, from memory.)
 */
const DEFAULT_BACKOFF_LIMIT = 3;

/** The Job's name, its pods' names and the `job-name` label share the 63-character limit of a DNS-1123 label. */
const MAX_NAME = 63;

export function kubernetesFiles(plan: TaskPlan, o: KubernetesOptions): LaunchFile[] {
  checkPlanForLaunch(plan, o.command);
  checkKubernetesOptions(plan, o);
  const jobs = plan.phases.map((phase, i) => {
    const nn = phaseNumber(i, plan.phases.length);
    const jobName = `siftpack-${nn}-${dnsLabel(phase.name)}`;
    if (jobName.length > MAX_NAME) throw new Error(`job name ${jobName} is longer than ${MAX_NAME} characters`);
    return { nn, file: `${nn}-${phase.name}.yaml`, jobName, content: jobManifest(plan, o, i, jobName) };
  });
  return [
    ...jobs.map((j) => ({ name: j.file, content: j.content })),
    { name: "submit.sh", content: submitScript(plan, o, jobs), executable: true },
  ];
}

/** Lower-case letters, digits and single `-` inside (DNS-1123 label, Kubernetes object names). */
export function dnsLabel(name: string): string {
  return name
    .toLowerCase()
    .replace(/[^a-z0-9]+/g, "-")
    .replace(/^-+|-+$/g, "");
}

function jobManifest(plan: TaskPlan, o: KubernetesOptions, i: number, jobName: string): string {
  const phase = plan.phases[i];
  const labels = () => ({ "app.kubernetes.io/name": "siftpack", "app.kubernetes.io/component": dnsLabel(phase.name) });
  const job = {
    apiVersion: "batch/v1",
    kind: "Job",
    metadata: { name: jobName, labels: labels() },
    spec: {
      completionMode: "Indexed",
      completions: phase.tasks,
      parallelism: Math.min(phase.tasks, o.parallelism),
      backoffLimit: o.backoffLimit ?? DEFAULT_BACKOFF_LIMIT,
      template: {
        metadata: { labels: labels() },
        spec: {
          restartPolicy: "Never",
          containers: [
            {
              name: "task",
              image: o.image,
              command: [...o.command, "task", plan.pipeline, "--phase", phase.name],
              volumeMounts: [{ name: "work", mountPath: o.mountPath }],
              resources: { requests: { cpu: o.cpu } },
            },
          ],
          volumes: [{ name: "work", persistentVolumeClaim: { claimName: o.claim } }],
        },
      },
    },
  };
  const header = [
    `# Phase ${i + 1} of ${plan.phases.length} (${phase.name}, ${phase.tasks} ${phase.tasks === 1 ? "task" : "tasks"}) of ${commentLine(plan.pipeline)}:`,
    `#   ${commentLine(phase.summary)}`,
    "# Written by `siftpack plan --emit kubernetes`; submit.sh beside it runs the phases in order.",
    "",
  ].join("\n");
  // No anchors or aliases: plain YAML that every Kubernetes client reads the same way.
  return header + stringify(job, { lineWidth: 0, aliasDuplicateObjects: false });
}

function submitScript(plan: TaskPlan, o: KubernetesOptions, jobs: { nn: string; file: string; jobName: string }[]): string {
  const n = jobs.length;
  const statusHint = `progress: ${shellCommand([...o.command, "status", plan.workDir])}   (in a pod that mounts ${o.claim})`;
  return [
    "#!/bin/sh",
    `# Runs the ${n} phases of ${commentLine(plan.pipeline)} as Kubernetes Jobs, one after the other: each`,
    "# phase starts when every task of the one before has completed. Written by `siftpack plan --emit kubernetes`.",
    `# Usage: submit.sh [FIRST]   start at phase FIRST (1-${n}, default 1), e.g. after fixing a failed phase.`,
    "set -eu",
    'here=$(cd "$(dirname "$0")" && pwd)',
    `timeout=${shellQuote(o.waitTimeout)}`,
    ...firstPhaseArgument(n),
    "",
    "# kubectl wait takes one condition, and a failed Job never becomes Complete: one waiter per outcome,",
    "# whichever ends first decides. Returns 0 when job/$1 is Complete, 1 when Failed or out of time.",
    "await_job() {",
    '  kubectl wait --for=condition=Complete --timeout="$timeout" "job/$1" >/dev/null &',
    "  complete_pid=$!",
    '  kubectl wait --for=condition=Failed --timeout="$timeout" "job/$1" >/dev/null 2>&1 &',
    "  failed_pid=$!",
    "  while :; do",
    '    if ! kill -0 "$complete_pid" 2>/dev/null; then',
    '      if [ -n "$failed_pid" ]; then kill "$failed_pid" 2>/dev/null || true; fi',
    '      wait "$complete_pid"',
    "      return",
    "    fi",
    '    if [ -n "$failed_pid" ] && ! kill -0 "$failed_pid" 2>/dev/null; then',
    '      if wait "$failed_pid"; then kill "$complete_pid" 2>/dev/null || true; return 1; fi',
    "      failed_pid=   # its wait ran out or could not start: the Complete waiter still decides",
    "    fi",
    "    sleep 1",
    "  done",
    "}",
    "",
    "run_phase() { # $1 = phase number, $2 = manifest beside this file, $3 = job name",
    '  if [ "$1" -lt "$first" ]; then return 0; fi',
    "  # A Job's pod template cannot be changed, and a finished Job left from an earlier run would count",
    "  # as done at once: start each phase from a fresh Job (tasks are idempotent).",
    '  kubectl delete job "$3" --ignore-not-found',
    '  kubectl apply -f "$here/$2"',
    '  echo "waiting for job/$3 (up to $timeout)"',
    '  if ! await_job "$3"; then',
    '    echo "job/$3 did not complete: kubectl describe job/$3; kubectl get pods -l job-name=$3; then $0 $1 to resume here" >&2',
    "    exit 1",
    "  fi",
    "}",
    "",
    ...jobs.map((j) => `run_phase ${j.nn} ${shellQuote(j.file)} ${shellQuote(j.jobName)}`),
    "",
    `echo 'jobs: kubectl get jobs -l app.kubernetes.io/name=siftpack'`,
    `printf '%s\\n' ${shellQuote(statusHint)}`,
    "",
  ].join("\n");
}

/** Kubernetes quantities and kubectl durations as plain tokens, e.g. "2", "500m" and "6h", "90m". */
const CPU_QUANTITY = /^(\d+(\.\d+)?|\d+m)$/;
const DURATION = /^(\d+(\.\d+)?(ns|us|ms|s|m|h))+$/;

function checkKubernetesOptions(plan: TaskPlan, o: KubernetesOptions): void {
  const usage = (message: string) => new SiftpackError("SP_USAGE", message);
  if (!Number.isInteger(o.parallelism) || o.parallelism < 1) throw usage(`parallelism must be a whole number ≥ 1, got ${o.parallelism}`);
  if (o.backoffLimit !== undefined && (!Number.isInteger(o.backoffLimit) || o.backoffLimit < 0)) {
    throw usage(`backoff limit must be a whole number ≥ 0, got ${o.backoffLimit}`);
  }
  if (o.image.trim() === "" || /\s/.test(o.image)) throw usage(`container image must be one word, got ${JSON.stringify(o.image)}`);
  // A claim is an object name: DNS-1123 subdomain (lower-case letters, digits, - and .).
  if (!/^[a-z0-9]([-a-z0-9.]*[a-z0-9])?$/.test(o.claim) || o.claim.length > 253) {
    throw usage(`claim ${JSON.stringify(o.claim)} is not a PersistentVolumeClaim name (lower-case letters, digits, - and .)`);
  }
  if (!CPU_QUANTITY.test(o.cpu)) throw usage(`CPU request ${JSON.stringify(o.cpu)} is not a CPU quantity such as 2, 0.5 or 500m`);
  if (!DURATION.test(o.waitTimeout)) throw usage(`wait timeout ${JSON.stringify(o.waitTimeout)} is not a duration such as 6h, 90m or 1h30m`);
  if (!posix.isAbsolute(o.mountPath)) throw usage(`mount path must be absolute, got ${JSON.stringify(o.mountPath)}`);
  // The pods see the plan's absolute paths through the claim only: each must lie under the mount.
  const mount = posix.normalize(o.mountPath).replace(/(.)\/+$/, "$1");
  for (const [what, path] of [["pipeline file", plan.pipeline], ["work directory", plan.workDir], ["output directory", plan.outDir]] as const) {
    const p = posix.normalize(path);
    if (!(mount === "/" || p === mount || p.startsWith(`${mount}/`))) {
      throw usage(`the ${what} ${path} is not under the mount path ${o.mountPath}: the pods see only what the claim ${o.claim} holds`);
    }
  }
}
