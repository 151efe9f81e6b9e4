// Wraps the class runs printed by derive-runs.mjs into src/tokenizer/unicode-data.ts.
import { readFileSync, writeFileSync } from "node:fs";
const runs = readFileSync(process.argv[2], "utf8");
const lines = [];
for (let i = 0; i < runs.length; i += 100) lines.push(JSON.stringify(runs.slice(i, i + 100)));
const src = `// Unicode 16.0 character classes for every code point, run-length encoded (decoded by unicode-classes.ts).
//
// Format: a sequence of runs covering U+0000..U+10FFFF in order; each run is one uppercase letter
// naming the class ("A" + class number, see unicode-classes.ts) followed by the run length in
// base 36. Unicode 16.0 is the version of the reference tokenizer's regex engine; pinning it here
// keeps token ids independent of the ICU version the host Node.js was built with. The table was
// derived from V8's General_Category tables with the characters added in Unicode 17.0 reset to
// unassigned; tests/tokenizer/unicode-classes.test.ts checks every code point against the reference.
export const CLASS_RUNS: string = [
${lines.map((l) => "  " + l + ",").join("\n")}
].join("");
`;
writeFileSync(process.argv[3], src);
