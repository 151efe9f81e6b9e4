// Stop-word lists per language, from the `stopword` package (npm stopword@3.1.5, MIT licence, no
// install script; lists for 62 languages): none is typed in here. The package names its lists by
// ISO 639-3 code ("deu", "jpn"); Intl.getCanonicalLocales (ICU's CLDR alias data) turns those into
// the two-letter codes that CLD3 and BCP 47 use ("de", "ja") where one exists, so no table of codes
// is typed in either. English keeps Gopher's eight words (gopher.ts), the published rule.
import { createRequire } from "node:module";

const require = createRequire(import.meta.url);

/** The language part of a label, canonical ("iw" → "he"); undefined for a label naming a script ("zh-Latn": romanized text matches no list). */
export function baseLanguage(label: string): string | undefined {
  try {
    const locale = new Intl.Locale(Intl.getCanonicalLocales(label)[0]);
    return locale.script ? undefined : locale.language;
  } catch {
    return undefined;
  }
}

/** The package's version (its package.json), for the build cache's keys and the manifest. */
export function stopwordVersion(): string {
  return (require("stopword/package.json") as { version: string }).version;
}

let lists: Map<string, ReadonlySet<string>> | undefined;

/** Every list of the package by canonical language code; the first list of a code wins ("por" before "porBr"). */
function load(): Map<string, ReadonlySet<string>> {
  if (lists) return lists;
  const pkg = require("stopword") as Record<string, unknown>;
  lists = new Map();
  // Plain three-letter names first, then variants ("porBr", "panGu", "lggNd"), each under its first three letters.
  const names = Object.keys(pkg)
    .filter((k) => /^[a-z]{3}/.test(k) && Array.isArray(pkg[k]))
    .sort((a, b) => a.length - b.length || (a < b ? -1 : 1));
  for (const name of names) {
    const code = baseLanguage(name.slice(0, 3));
    if (code && !lists.has(code)) lists.set(code, new Set((pkg[name] as string[]).map((w) => w.normalize("NFC").toLocaleLowerCase(code))));
  }
  return lists;
}

/** The package's list for a language label, or undefined when it has none. */
export function packageList(label: string): ReadonlySet<string> | undefined {
  const code = baseLanguage(label);
  return code === undefined ? undefined : load().get(code);
}

/** The languages with a list (codes, sorted). */
export function listedLanguages(): string[] {
  return [...load().keys()].sort();
}
