// The shape of a build planned as phases of independent tasks (what `plan --tasks` prints and the launch files are made from).

/** One phase: `tasks` independent tasks, indexed 0..tasks-1, all of which must finish before the next phase starts. */
export interface PhaseInfo {
  name: string;
  tasks: number;
  /** One line for `plan --tasks` and the launch files' comments. */
  summary: string;
}

export interface TaskPlan {
  /** The pipeline file, absolute. */
  pipeline: string;
  /** The shared work directory, absolute: phase outputs, task markers and logs. */
  workDir: string;
  /** The build directory the assemble phase publishes, absolute. */
  outDir: string;
  phases: PhaseInfo[];
}
