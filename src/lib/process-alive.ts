// Whether a process runs on this machine: for the run lock and the task markers of `status`.

/** True when a process with this pid runs here (EPERM: it does, as another user). */
export function processAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return (err as NodeJS.ErrnoException).code === "EPERM";
  }
}
