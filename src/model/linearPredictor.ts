/**
 * The posterior of one combination's linear predictor a = xᵀθ under θ ~ N(μ, P⁻¹): a Gaussian with
 * mean xᵀμ and variance xᵀP⁻¹x = ‖L⁻¹x‖² for the Cholesky factor P = L Lᵀ — one forward
 * substitution, never the inverse (Rue & Held, Gaussian Markov Random Fields, 2005, §2.3.1).
 * σ is monotone, so σ(xᵀμ ± z·sd) are exact credible bounds of the conversion rate σ(a); no
 * Monte Carlo quantile is needed for them.
 */
import type { Gaussian } from "./hierarchy.ts";
import { forwardSolve } from "./linalg.ts";

export interface LinearPredictor {
  mean: number;
  sd: number;
}

/**
 * `active` lists the combination's feature indices (writeActiveFeatures); index d is the always-zero
 * slot and is skipped. `scratch` has length d and is overwritten.
 */
export function linearPredictor(g: Gaussian, d: number, active: ArrayLike<number>, scratch: Float64Array): LinearPredictor {
  scratch.fill(0);
  let mean = 0;
  for (let a = 0; a < active.length; a++) {
    const j = active[a];
    if (j === d) continue;
    mean += g.mean[j];
    scratch[j] += 1;
  }
  forwardSolve(g.chol, d, scratch);
  let variance = 0;
  for (let i = 0; i < d; i++) variance += scratch[i] * scratch[i];
  return { mean, sd: Math.sqrt(variance) };
}
