// What `plan` expects of a mixture before any build: each source's train tokens estimated from its
// input bytes and the bytes per token of a sample of its files, and the factor (epochs) the shares
// would then need. An estimate: the stages (filter, dedup, …) have not run on the sample.
import { stat } from "node:fs/promises";
import { SiftpackError } from "../errors.js";
import { join } from "node:path";
import { readSourceFile, RecordMapper } from "../sources/source.js";
import { outputSettings } from "../stages/output-settings.js";
import { loadEncoding, TokenBuffer } from "../tokenizer/index.js";
import { CompiledTemplate } from "../chat/template.js";
import type { CheckedPipeline } from "../pipeline/preflight.js";
import type { Encoder } from "../tokenizer/encoder.js";
import { askedTokens, EPOCH_WARNING, epochWarning, overMessage, REPEAT_FINDING } from "./mixture.js";

/** Records sampled per source at least (whole files are read until there are this many): our choice, small enough for `plan` to stay quick; not a measured bound on the estimate's error. */
export const SAMPLE_RECORDS = 200;

export interface SourceEstimate {
  source: string;
  files: number;
  input_bytes: number;
  sample: { files: number; records: number; bytes: number; tokens: number };
  /** Input bytes (as stored, compressed or not) per token of the sampled files. */
  bytes_per_token: number;
  /** Tokens of the whole source, and of its train share after the split's holdout fractions. */
  tokens: number;
  train_tokens: number;
  share: number;
  tokens_asked: number;
  /** Expected factor: tokens asked / train tokens (the epochs). */
  epochs: number;
}

export interface MixtureEstimate {
  tokenizer: string;
  train_fraction: number;
  train_tokens: number;
  budget_from: "asked" | "largest without repetition";
  sources: SourceEstimate[];
  /** Above EPOCH_WARNING epochs, or a budget above max_epochs, or a share without tokens. */
  warnings: string[];
}

export async function estimateMixture(p: CheckedPipeline): Promise<MixtureEstimate | undefined> {
  const m = p.config.mixture;
  if (!m) return undefined;
  const out = outputSettings(p.config.stages, p.baseDir);
  const tok = p.config.stages.find((s) => s.name === "tokenize");
  // A tokenizer trained by the build does not exist yet: gpt2 stands in, and the estimate says so.
  const trained = tok?.options?.train !== undefined;
  const encoder: Encoder = trained ? loadEncoding("gpt2") : out.encoder();
  const extra = (out.eos ? 1 : 0) + (out.bos ? 1 : 0);
  // A conversation is counted as rendered, its template's markers included.
  const template = tok?.options?.template ? new CompiledTemplate(tok.options.template) : undefined;
  const buf = new TokenBuffer();
  const split = p.config.stages.find((s) => s.name === "split");
  const holdout = split ? Object.values((split.options?.holdout ?? {}) as Record<string, number>).reduce((a, x) => a + x, 0) : 0;
  const trainFraction = Math.max(0, 1 - holdout);
  const sources: Omit<SourceEstimate, "share" | "tokens_asked" | "epochs">[] = [];
  const skipped: string[] = [];
  for (const source of p.config.sources) {
    const files = p.inputs[source.name] ?? [];
    const sizes = new Map<string, number>();
    for (const f of files) sizes.set(f, (await stat(join(p.baseDir, f))).size);
    const inputBytes = [...sizes.values()].reduce((a, x) => a + x, 0);
    const sample = { files: 0, records: 0, bytes: 0, tokens: 0 };
    // Whole files, so that their bytes (compressed or not) and their tokens belong together; the
    // smallest first (ties in build order), so that a corpus of a few huge files is not read whole by `plan`.
    const order = [...files].sort((a, b) => sizes.get(a)! - sizes.get(b)!);
    for (const f of order) {
      if (sample.records >= SAMPLE_RECORDS) break;
      const mapper = new RecordMapper(source);
      let records = 0;
      let tokens = 0;
      try {
        for await (const e of readSourceFile(source, p.baseDir, f, mapper)) {
          if (e.kind !== "record") continue;
          records++;
          tokens += e.turns && template && !trained ? template.encode(encoder, e, out.bos, out.eos, buf).tokens.length : encoder.encode(e.text).length + extra;
        }
      } catch (err) {
        // A file a run would fail on is the run's to report; the estimate goes on without it.
        if (!(err instanceof SiftpackError)) throw err;
        skipped.push(`the mixture estimate left out ${f}: ${err.message}`);
        continue;
      }
      sample.records += records;
      sample.tokens += tokens;
      sample.files++;
      sample.bytes += sizes.get(f)!;
    }
    const bpt = sample.tokens === 0 ? 0 : sample.bytes / sample.tokens;
    const tokens = bpt === 0 ? 0 : Math.round(inputBytes / bpt);
    sources.push({ source: source.name, files: files.length, input_bytes: inputBytes, sample, bytes_per_token: bpt, tokens, train_tokens: Math.round(tokens * trainFraction) });
  }
  const a = askedTokens(m, sources.map((s) => s.source), new Map(sources.map((s) => [s.source, s.train_tokens])));
  const warnings = [...skipped, ...a.problems];
  const over = a.sources.filter((s) => s.factor > m.max_epochs);
  if (over.length) warnings.push(`by this estimate, ${overMessage(m, a.budget, over)}`);
  for (const s of a.sources) if (s.factor > EPOCH_WARNING && s.factor <= m.max_epochs) warnings.push(`by this estimate, ${epochWarning(s.source, s.factor, "would be seen")}, more than ${EPOCH_WARNING}: ${REPEAT_FINDING}`);
  return {
    tokenizer: trained ? "gpt2 (standing in for the tokenizer the build trains)" : encoder.name,
    train_fraction: trainFraction,
    train_tokens: Math.round(a.budget),
    budget_from: m.train_tokens !== undefined ? "asked" : "largest without repetition",
    sources: sources.map((s, i) => ({ ...s, share: a.sources[i].share, tokens_asked: Math.round(a.sources[i].tokens_asked), epochs: a.sources[i].factor })),
    warnings,
  };
}
