// The recall check of tests/dedup/real-text.test.ts on every copyright paragraph instead of a sample (slow: brute force over all pairs; `npm run build` first).
//
//   node bench/minhash-recall.js [--every 1] [--threshold 0.8]
//
// Documents: paragraphs of 12–3000 words of /usr/share/doc/*/copyright (every --every-th package).
// Brute force: exact Jaccard of every pair over the stage's own shingles (word 5-grams, lower-cased).
// Prints the recall of pairs at J ≥ 0.9 (all, and those with J < 1) and the removed records without
// any neighbour at J ≥ 0.6.
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

const dist = (p) => new URL(`../dist/${p}`, import.meta.url).href;
const dedupStage = (await import(dist("stages/dedup.js"))).default;
const { dedupOptions } = await import(dist("dedup/options.js"));
const { Shingler, shingleSet, jaccard } = await import(dist("dedup/shingles.js"));

const args = process.argv.slice(2);
const opt = (name, dflt) => {
  const i = args.indexOf(`--${name}`);
  return i >= 0 ? Number(args[i + 1]) : dflt;
};
const every = opt("every", 1);
const threshold = opt("threshold", 0.8);

const root = "/usr/share/doc";
const paras = [];
readdirSync(root)
  .sort()
  .forEach((pkg, i) => {
    const file = `${root}/${pkg}/copyright`;
    if (i % every !== 0 || !existsSync(file)) return;
    let text;
    try {
      text = readFileSync(file, "utf8");
    } catch {
      return;
    }
    text.split(/\n[ \t]*\n/).forEach((p, j) => {
      const words = p.split(/\s+/).filter(Boolean).length;
      if (words >= 12 && words <= 3000) paras.push({ id: `${pkg}#${j}`, text: p });
    });
  });

const issues = [];
const o = dedupOptions.check({ method: "minhash", threshold }, [], issues);
if (issues.length) throw new Error(JSON.stringify(issues));
const workDir = mkdtempSync(join(tmpdir(), "siftpack-recall-"));
const cluster = new Map();
let removed = 0;
const ctx = {
  seed: 7,
  workDir,
  addOutputFile: () => undefined,
  count: () => undefined,
  drop: (r, _reason, detail) => {
    cluster.set(r.id, detail.of);
    removed++;
  },
  log: { info: () => undefined, warn: () => undefined, error: () => undefined, debug: () => undefined },
};
async function* input() {
  let seq = 0;
  for (const p of paras) yield { id: p.id, source: "copyright", text: p.text, meta: {}, origin: { file: p.id, line: 1 }, seq: seq++ };
}
let t = performance.now();
for await (const r of (await dedupStage.create(o, { baseDir: "." }))(input(), ctx)) cluster.set(r.id, r.id);
const stageSec = (performance.now() - t) / 1000;
rmSync(workDir, { recursive: true, force: true });

t = performance.now();
const sh = new Shingler({ kind: "word", ngram: 5, lowercase: true }, 7);
const sets = paras.map((p) => shingleSet(sh, p.text));
const neighbour = new Uint8Array(paras.length);
let pairs = 0;
let found = 0;
let partial = 0;
let partialFound = 0;
for (let i = 0; i < sets.length; i++) {
  for (let j = i + 1; j < sets.length; j++) {
    const J = jaccard(sets[i], sets[j]);
    if (J >= 0.6) neighbour[i] = neighbour[j] = 1;
    if (J < 0.9) continue;
    const same = cluster.get(paras[i].id) === cluster.get(paras[j].id);
    pairs++;
    if (same) found++;
    if (J < 1) {
      partial++;
      if (same) partialFound++;
    }
  }
}
const lonely = paras.filter((p, i) => cluster.get(p.id) !== p.id && !neighbour[i]).length;
const pct = (a, b) => ((100 * a) / b).toFixed(2);
console.log(`${paras.length} paragraphs; stage ${stageSec.toFixed(1)} s, brute force ${((performance.now() - t) / 1000).toFixed(1)} s; threshold ${threshold}`);
console.log(`removed ${removed}; pairs at J ≥ 0.9: ${pairs}, in one cluster: ${found} (${pct(found, pairs)} %)`);
console.log(`  of them 0.9 ≤ J < 1: ${partial}, in one cluster: ${partialFound} (${pct(partialFound, partial)} %)`);
console.log(`removed without a neighbour at J ≥ 0.6: ${lonely}`);
