// Derives the tokenizer's pinned Unicode 16.0 class runs from this Node's tables minus the code points listed in a JSON file (ranges added in Unicode 17.0, found by comparing every code point with the reference tokenizer).
import { readFileSync } from "node:fs";
const CLS = { OTHER: 0, LU: 1, LT: 2, LL: 3, LM: 4, LO: 5, MARK: 6, NUM: 7, WS: 8 };
const tests = [
  [CLS.LU, /^\p{Lu}$/u], [CLS.LT, /^\p{Lt}$/u], [CLS.LL, /^\p{Ll}$/u], [CLS.LM, /^\p{Lm}$/u],
  [CLS.LO, /^\p{Lo}$/u], [CLS.MARK, /^\p{M}$/u], [CLS.NUM, /^\p{N}$/u],
];
const WS = [[0x9, 0xd], [0x20, 0x20], [0x85, 0x85], [0xa0, 0xa0], [0x1680, 0x1680], [0x2000, 0x200a], [0x2028, 0x2029], [0x202f, 0x202f], [0x205f, 0x205f], [0x3000, 0x3000]];
const table = new Uint8Array(0x110000);
for (let cp = 0; cp < 0x110000; cp++) {
  if (cp >= 0xd800 && cp <= 0xdfff) continue;
  const s = String.fromCodePoint(cp);
  for (const [c, re] of tests) if (re.test(s)) { table[cp] = c; break; }
}
for (const [a, b] of WS) for (let cp = a; cp <= b; cp++) table[cp] = CLS.WS;
const excl = process.argv[2] ? JSON.parse(readFileSync(process.argv[2], "utf8")) : [];
for (const [a, b, c] of excl) for (let cp = a; cp <= b; cp++) table[cp] = c ?? 0;
// runs
let out = "", runs = 0;
for (let i = 0; i < 0x110000; ) {
  let j = i; while (j < 0x110000 && table[j] === table[i]) j++;
  out += String.fromCharCode(65 + table[i]) + (j - i).toString(36); runs++;
  i = j;
}
console.error("runs", runs, "chars", out.length);
process.stdout.write(out);
