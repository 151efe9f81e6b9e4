// Full comparison of siftpack's ids with the reference tokenizer over the system's licence and copyright texts, for every encoding.
//
// Reference: the `tiktoken` npm package (WASM build of OpenAI's tiktoken), encode_ordinary. The
// test suite compares a sample (tests/tokenizer/reference-corpus.test.ts); this script compares
// every file of /usr/share/common-licenses and every /usr/share/doc/*/copyright, whole, with every
// encoding in ENCODINGS. Prints counts of texts, bytes and ids compared and mismatches; exit 1 on
// any mismatch. Needs the build: `npm run build && node bench/tokenizer-compare.js`.
import { readFileSync, readdirSync, statSync } from "node:fs";
import { join } from "node:path";
import { get_encoding } from "tiktoken";

const { ENCODINGS, loadEncoding } = await import(new URL("../dist/tokenizer/index.js", import.meta.url).href);

function isFile(p) {
  try {
    return statSync(p).isFile();
  } catch {
    return false;
  }
}

const files = [
  ...readdirSync("/usr/share/common-licenses").sort().map((f) => join("/usr/share/common-licenses", f)),
  ...readdirSync("/usr/share/doc").sort().map((d) => join("/usr/share/doc", d, "copyright")),
].filter(isFile);
// Decoded as the pipeline decodes input (UTF-8, invalid bytes as U+FFFD), so both sides see the same string.
const texts = files.map((f) => ({ file: f, text: readFileSync(f, "utf8") }));
const bytes = texts.reduce((a, t) => a + Buffer.byteLength(t.text), 0);

let failed = false;
console.log(`texts: ${texts.length} files, ${bytes} bytes (UTF-8)`);
for (const name of ENCODINGS) {
  const ours = loadEncoding(name);
  const ref = get_encoding(name);
  const started = process.hrtime.bigint();
  let mismatches = 0;
  let ids = 0;
  const examples = [];
  for (const { file, text } of texts) {
    const a = ours.encode(text);
    const b = ref.encode_ordinary(text);
    ids += b.length;
    let same = a.length === b.length;
    for (let k = 0; same && k < a.length; k++) same = a[k] === b[k];
    if (!same) {
      mismatches++;
      if (examples.length < 5) examples.push(file);
    }
  }
  ref.free();
  const ms = Number(process.hrtime.bigint() - started) / 1e6;
  console.log(`${name.padEnd(12)} texts ${texts.length}  bytes ${bytes}  reference ids ${ids}  mismatches ${mismatches}  (${ms.toFixed(0)} ms, both sides)`);
  for (const f of examples) console.log(`  mismatch: ${f}`);
  if (mismatches > 0) failed = true;
}
console.log(failed ? "FAIL: ids differ from the reference" : "OK: all ids equal the reference");
process.exit(failed ? 1 : 0);
