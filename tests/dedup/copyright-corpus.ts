// Real text for the recall and estimator checks: paragraphs of the Debian copyright files under /usr/share/doc.
// The same licence paragraphs recur across packages with small edits (names, years, wording), which
// gives pairs at every similarity. Nothing about the files is stored: every expected value is
// computed from them in the test.
import { existsSync, readdirSync, readFileSync } from "node:fs";

/**
 * Paragraphs (blocks between blank lines) of 12 to 3000 words from every `every`-th package's
 * copyright file, packages in byte order of their names: a deterministic sample of a few thousand.
 */
export function copyrightParagraphs(every = 6): { name: string; text: string }[] {
  const root = "/usr/share/doc";
  const names = readdirSync(root).sort();
  const out: { name: string; text: string }[] = [];
  names.forEach((pkg, i) => {
    const file = `${root}/${pkg}/copyright`;
    if (i % every !== 0 || !existsSync(file)) return;
    let text: string;
    try {
      text = readFileSync(file, "utf8");
    } catch {
      return;
    }
    text.split(/\n[ \t]*\n/).forEach((p, j) => {
      const words = p.split(/\s+/).filter(Boolean).length;
      if (words >= 12 && words <= 3000) out.push({ name: `${pkg}#${j}`, text: p });
    });
  });
  if (out.length < 500) throw new Error(`expected the copyright files of /usr/share/doc to give ≥ 500 paragraphs, got ${out.length}`);
  return out;
}
