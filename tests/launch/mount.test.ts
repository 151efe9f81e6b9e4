// The default mount of the shared volume for `plan --emit kubernetes`: the deepest directory holding the pipeline, work and output directories.
import { describe, expect, it } from "vitest";
import { commonDir } from "../../src/cli/plan.js";

describe("commonDir", () => {
  it("is the deepest shared directory, by whole path components", () => {
    expect(commonDir(["/mnt/depot/pipelines", "/mnt/depot/.tickets.work", "/mnt/depot/build"])).toBe("/mnt/depot");
    expect(commonDir(["/mnt/depot/a", "/mnt/depot/a"])).toBe("/mnt/depot/a");
    // "/mnt/dep" is a prefix of "/mnt/depot" as text, not as a directory.
    expect(commonDir(["/mnt/dep/x", "/mnt/depot/y"])).toBe("/mnt");
    expect(commonDir(["/data/x", "/scratch/y"])).toBe("/");
  });
});
