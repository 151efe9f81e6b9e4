// The analyses a build runs, in manifest key order, and the keyed form that runs one with the keyed
// stages' step functions (collectUnit, partitionStep over a KeyedDirs with packing groups as units).
import type { KeyedForm } from "../stages/keyed.js";
import type { AnalysisContext, AnalysisSteps } from "./steps.js";
import { overlapSteps } from "./overlap-steps.js";
import { tokenStatsSteps } from "./token-stats-steps.js";

/** Every build runs these; each says by `applies` whether it has figures to give. token_stats comes first in the manifest. */
export const ANALYSES: AnalysisSteps[] = [tokenStatsSteps, overlapSteps];

/**
 * An analysis as a keyed form, so `partitionStep(form, undefined, dirs, p, ctx)` runs its partition
 * step with the keyed stages' clean-rerun and shared-file handling. The applier is never used: an
 * analysis decides nothing about records.
 */
export function analysisForm(steps: AnalysisSteps, ctx: AnalysisContext): KeyedForm<undefined> {
  return {
    kind: "keyed",
    steps: { partition: `analysis-${steps.key}` },
    collectors: (_o, env) => steps.collectors(ctx, env),
    partition: (_o, p, files, out, step) => steps.partition(ctx, p, files, out, step),
    applier: async () => (r) => r,
  };
}
