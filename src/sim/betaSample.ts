/**
 * Draws from Beta(a, b) for a, b ≥ 1, for the independent Thompson-sampling baseline.
 *
 * Beta(a, b) = X / (X + Y) with X ~ Gamma(a), Y ~ Gamma(b) (e.g. Devroye, "Non-Uniform Random
 * Variate Generation", 1986, ch. IX.4); Gamma(α ≥ 1) by Marsaglia & Tsang, "A simple method for
 * generating gamma variables", ACM TOMS 26(3), 2000. Shortcuts (same book, from the inverse CDF):
 * Beta(1, 1) is uniform, Beta(1, b) = 1 − U^(1/b), Beta(a, 1) = U^(1/a) — most cells of a
 * low-conversion page are Beta(1, b), so this keeps the baseline fast.
 */
import type { Rng } from "../model/index.ts";

function gamma(shape: number, rng: Rng): number {
  const d = shape - 1 / 3;
  const c = 1 / Math.sqrt(9 * d);
  for (;;) {
    let x: number, v: number;
    do {
      x = rng.normal();
      v = 1 + c * x;
    } while (v <= 0);
    v = v * v * v;
    const u = rng.next();
    if (u < 1 - 0.0331 * x * x * x * x) return d * v;
    if (Math.log(u) < 0.5 * x * x + d * (1 - v + Math.log(v))) return d * v;
  }
}

export function betaSample(a: number, b: number, rng: Rng): number {
  if (a === 1) return b === 1 ? rng.next() : 1 - Math.pow(rng.next(), 1 / b);
  if (b === 1) return Math.pow(rng.next(), 1 / a);
  const x = gamma(a, rng);
  return x / (x + gamma(b, rng));
}
