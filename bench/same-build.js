// Whether two build folders hold the same bytes, file for file: every file but build-info.json
// (which holds times and paths). Used by the benches that compare builds made two ways.
import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";

const filesOf = (dir, rel = "") =>
  readdirSync(join(dir, rel), { withFileTypes: true }).flatMap((e) => (e.isDirectory() ? filesOf(dir, join(rel, e.name)) : [join(rel, e.name)]));

export function sameBuild(a, b) {
  const fa = filesOf(a).filter((f) => f !== "build-info.json").sort();
  const fb = filesOf(b).filter((f) => f !== "build-info.json").sort();
  return fa.length === fb.length && fa.every((f, i) => f === fb[i] && readFileSync(join(a, f)).equals(readFileSync(join(b, f))));
}
