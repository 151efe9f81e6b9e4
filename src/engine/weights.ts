// Mixture weights: how many times a record of a weighted source enters the training split.
import { unitHash } from "../lib/hash.js";

/** How many times a record of a source with `weight` enters training: floor(w), plus one more with probability frac(w). */
export function copiesFor(weight: number, key: string, seed: number): number {
  const whole = Math.floor(weight);
  const frac = weight - whole;
  return whole + (frac > 0 && unitHash(key, seed ^ 0x5eed) < frac ? 1 : 0);
}
