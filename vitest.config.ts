import { availableParallelism } from "node:os";
import { defineConfig } from "vitest/config";

export default defineConfig({
  test: {
    include: ["tests/**/*.test.ts"],
    // One temporary folder per run, removed at its end (tests/global-setup.ts).
    globalSetup: ["tests/global-setup.ts"],
    testTimeout: 120_000,
    hookTimeout: 120_000,
    pool: "forks",
    // Two files at a time even on two cores (vitest's default there is one): the siftpack processes
    // the end-to-end tests start leave cores idle while they start, write files and run one-thread
    // phases, and a second file fills those gaps. Measured on the 2-core development machine: the
    // suite took 715 s one file at a time and 444 s two at a time; its slowest test 47 s.
    maxWorkers: Math.max(2, availableParallelism() - 1),
  },
});
