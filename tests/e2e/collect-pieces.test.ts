// A packing group packed again collects only the units that changed: the analyses' collection (the
// overlap figures' keys and signatures, the token statistics) is kept per piece, one unit's records
// in one group (src/engine/unit-io.ts, collectPieces). The demo's files all lie in one group at the
// default group size; a new manual sorts last, so the group is packed again with it, and the other
// units' pieces come from the cache. The build must equal a clean one, figures included.
import { describe, expect, it } from "vitest";
import { readFileSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { demoCopy, outputFiles, siftpack } from "./cli.js";

/** An invented manual of the tram depots, none of whose lines repeat another document's. */
const MANUAL = [
  "FLEET ENGINEERING MANUAL MN-99",
  "Care of the wheel-lathe pit covers at the Saltings depot",
  "",
  "1. Purpose",
  "",
  "This note explains how the hinged steel covers over the wheel-lathe pit are lifted,",
  "propped and lowered again, so that no cover is left half open while a tram is moved.",
  "",
  "2. Lifting a cover",
  "",
  "Two fitters lift each cover by its recessed handles, one at each end, and set the",
  "yellow prop into the socket on the pit wall before letting go of the handles.",
  "A cover with a bent prop socket is tagged and reported to the depot foreman.",
  "",
  "3. Lowering a cover",
  "",
  "The prop comes out only after both fitters hold the cover again; the cover is lowered",
  "slowly onto its rubber seat and the locking pin is pushed home by hand.",
].join("\n");

describe("a packing group packed again reuses the pieces of its collection the change does not reach", () => {
  it("a new file joins the group: only its piece is collected, and the build equals a clean build", () => {
    const dir = demoCopy();
    const pipeline = join(dir, "pipelines/demo.yaml");
    // Without the mixture: its plan for a source changes with that source's token count, and with it what packing keeps of every unit of the source.
    writeFileSync(pipeline, readFileSync(pipeline, "utf8").replace(/^mixture:[\s\S]*?(?=^stages:)/m, ""));
    expect(readFileSync(pipeline, "utf8")).not.toContain("mixture:");
    const run = (...extra: string[]) => siftpack(["run", pipeline, "--workers", "2", ...extra], { env: { SIFTPACK_TASK_THREADS_FROM_MB: "0", SIFTPACK_LOG: "debug" } });
    const packed = (stderr: string) =>
      stderr
        .split("\n")
        .filter((l) => l.includes('"group packed"'))
        .map((l) => JSON.parse(l) as { group: number; units: number; pieces_reused: number })
        .map(({ group, units, pieces_reused }) => ({ group, units, pieces_reused }));

    const first = run();
    expect(first.code, first.stderr).toBe(0);
    const [before] = packed(first.stderr);
    expect(packed(first.stderr)).toEqual([{ ...before, group: 0, pieces_reused: 0 }]);

    writeFileSync(join(dir, "sample-data/manuals/MN-99-lathe-pit-covers.txt"), MANUAL + "\n");
    const second = run();
    expect(second.code, second.stderr).toBe(0);
    expect(packed(second.stderr)).toEqual([{ ...before, units: before.units + 1, pieces_reused: before.units }]);

    const clean = join(dir, "build/clean");
    rmSync(clean, { recursive: true, force: true });
    const c = siftpack(["run", pipeline, "--out", clean, "--no-cache", "--quiet", "--workers", "1"]);
    expect(c.code, c.stderr).toBe(0);
    expect(outputFiles(join(dir, "build/demo"))).toEqual(outputFiles(clean));
  });
});
