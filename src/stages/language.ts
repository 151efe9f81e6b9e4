// language: identifies each record's language (CLD3, via the cld3-asm package), stores it in meta, keeps chosen languages.
//
// CLD3 is a small neural network over character n-grams that reports a probability with its
// guess, which is what `min_confidence` compares against. It decides from the first
// `sample_bytes` bytes of UTF-8; short texts (a few words) are often misidentified, which is
// why records can be dropped for low confidence rather than trusted.
import type { CldFactory } from "cld3-asm";
// The labels alone (a small file of the package): the identifier itself is loaded when a build first needs it (loadIdentifier).
import { LanguageCode } from "cld3-asm/dist/cjs/languageCode.js";
import { defineStage } from "./stage.js";
import { field, num, obj, type Infer, type Issue, type Path, type Schema } from "../pipeline/schema.js";
import { closest } from "../lib/did-you-mean.js";

/** CLD3's labels (ISO 639-1 where one exists, e.g. "en", "de"; a few others like "fil", "haw", "zh-Latn"), read from the package. */
export const LANGUAGE_CODES: readonly string[] = Object.values(LanguageCode).filter(
  (c) => c !== "und",
);

/** The label for text with no letters at all (digits, symbols, empty): CLD3 would still guess, so it is not asked. */
export const UNDETERMINED = "und";

function languageCode(): Schema<string> {
  const describe = "a language code CLD3 knows (e.g. en, de, fr)";
  return {
    describe,
    check(value: unknown, path: Path, issues: Issue[]): string {
      if (typeof value !== "string" || !LANGUAGE_CODES.includes(value)) {
        const near = typeof value === "string" ? closest(value, LANGUAGE_CODES) : undefined;
        issues.push({ path, message: `expected ${describe}, got ${JSON.stringify(value)}${near ? ` (did you mean "${near}"?)` : ""}` });
      }
      return value as string;
    },
  };
}

function codeList(): Schema<string[]> {
  const code = languageCode();
  return {
    describe: `a list of ${code.describe}`,
    check(value, path, issues) {
      const items = Array.isArray(value) ? value : [value];
      return items.map((v, i) => code.check(v, Array.isArray(value) ? [...path, i] : path, issues));
    },
  };
}

export const languageOptions = obj({
  /** Languages to keep; empty keeps every language (the stage then only labels records). */
  keep: field(codeList(), { default: [] as string[] }),
  /** Records whose identification has a lower probability are dropped as `language:uncertain`. */
  min_confidence: field(num({ min: 0, max: 1 }), { default: 0 }),
  /** CLD3 reads at most this many bytes from the start of the text (its own default is 1000). */
  sample_bytes: field(num({ integer: true, min: 16, max: 1 << 20 }), { default: 4096 }),
});
export type LanguageOptions = Infer<typeof languageOptions>;

type Identifier = ReturnType<CldFactory["create"]>;

let factory: Promise<CldFactory> | undefined;
/** Compiles CLD3's WebAssembly once per process (per worker thread); the package is loaded only then, so builds without the stage do not load it. */
export function loadIdentifier(): Promise<CldFactory> {
  factory ??= import("cld3-asm").then((cld3) => cld3.loadModule());
  return factory;
}

const identifiers = new Map<number, Identifier>();
/**
 * One identifier per sample size for the life of the process: the stage may be built once per
 * run and its function called once per record (per-record stages run record by record in worker
 * threads), so creating and disposing one per call would waste time, and these few are never freed.
 */
async function identifierFor(sampleBytes: number): Promise<Identifier> {
  let id = identifiers.get(sampleBytes);
  // minBytes 0: CLD3 otherwise answers "und" below 140 bytes, and short tickets are common.
  if (!id) identifiers.set(sampleBytes, (id = (await loadIdentifier()).create(0, sampleBytes)));
  return id;
}

const LETTER = /\p{L}/u;

export interface Identified {
  language: string;
  confidence: number;
}

/** One text's language and probability (rounded to 4 decimals, so meta and ledger stay short). */
export function identify(id: Identifier, text: string): Identified {
  if (!LETTER.test(text)) return { language: UNDETERMINED, confidence: 0 };
  const r = id.findLanguage(text);
  if (r.language === UNDETERMINED) return { language: UNDETERMINED, confidence: 0 };
  return { language: r.language, confidence: Math.round(r.probability * 10000) / 10000 };
}

export default defineStage({
  name: "language",
  summary: "identifies the language (CLD3) into meta.language / meta.language_confidence; keeps the listed languages",
  options: languageOptions,
  form: { kind: "record" },
  async create(o: LanguageOptions) {
    const id = await identifierFor(o.sample_bytes);
    const keep = new Set(o.keep);
    return async function* language(input, ctx) {
      for await (const r of input) {
        const { language, confidence } = identify(id, r.text);
        r.meta.language = language;
        r.meta.language_confidence = confidence;
        ctx.count(`language:${language}`);
        if (confidence < o.min_confidence) ctx.drop(r, "language:uncertain", { language, confidence, min: o.min_confidence });
        else if (keep.size > 0 && !keep.has(language)) ctx.drop(r, "language:other", { language, confidence });
        else yield r;
      }
    };
  },
});
