// Builds benchmark corpora from real text on this machine: the paragraphs of
// /usr/share/doc/*/copyright and /usr/share/common-licenses, repeated with seeded word edits until
// the wanted size, as JSON lines {id, group, text}. Deterministic for a given size.
import { readdirSync, readFileSync, existsSync, mkdirSync, createWriteStream, statSync } from "node:fs";
import { join } from "node:path";
import { once } from "node:events";

export function realParagraphs() {
  const files = [];
  for (const d of readdirSync("/usr/share/doc").sort()) {
    const f = join("/usr/share/doc", d, "copyright");
    if (existsSync(f)) files.push(f);
  }
  for (const f of readdirSync("/usr/share/common-licenses").sort()) files.push(join("/usr/share/common-licenses", f));
  const paras = [];
  for (const f of files) {
    let text;
    try {
      if (!statSync(f).isFile()) continue;
      text = readFileSync(f, "utf8");
    } catch {
      continue;
    }
    for (const p of text.split(/\n\s*\n/)) if (p.trim().length > 40) paras.push(p.trim());
  }
  return paras;
}

function rng(seed) {
  let s = seed >>> 0;
  return () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
}

/** Writes `mb` megabytes of documents (1–6 paragraphs each, about 5 % of words edited) to dir; returns the path. */
export async function makeCorpus(dir, mb) {
  mkdirSync(dir, { recursive: true });
  const path = join(dir, `corpus-${mb}mb.jsonl`);
  if (existsSync(path) && statSync(path).size >= mb * 1e6) return path;
  const paras = realParagraphs();
  const rand = rng(mb * 7919);
  const out = createWriteStream(path);
  let bytes = 0;
  let n = 0;
  const target = mb * 1e6;
  while (bytes < target) {
    const k = 1 + Math.floor(rand() * 6);
    const parts = [];
    for (let i = 0; i < k; i++) {
      const words = paras[Math.floor(rand() * paras.length)].split(" ");
      for (let w = 0; w < words.length; w++) if (rand() < 0.05) words[w] = words[Math.floor(rand() * words.length)];
      parts.push(words.join(" "));
    }
    const line = JSON.stringify({ id: `b${n}`, group: `g${n % 50}`, text: parts.join("\n\n") }) + "\n";
    n++;
    bytes += Buffer.byteLength(line);
    if (!out.write(line)) await once(out, "drain");
  }
  out.end();
  await once(out, "close");
  return path;
}
