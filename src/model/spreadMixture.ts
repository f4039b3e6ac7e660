/**
 * Posteriors averaged over the segment spread τ's posterior: p(θ | y) = Σ_k p(τ_k | y) p(θ | y, τ_k)
 * on the grid of spreadSearch.ts, each mixture replaced by the Gaussian with its mean and
 * covariance (moment matching, the projection expectation propagation uses: Minka 2001, ch. 3):
 *   m = Σ w_k m_k,   C = Σ w_k (C_k + (m_k − m)(m_k − m)ᵀ).
 * Why: with few segments τ is poorly identified, and plugging in its most probable value makes a
 * small segment's interval too narrow — it ignores how much the segment's shrinkage towards the
 * pooled effects depends on τ (Gelman et al., Bayesian Data Analysis, 3rd ed. 2013, §5.4, which
 * averages over p(τ | y) for the same reason). Measured with `npm run bench:coverage`.
 */
import type { Gaussian, Posteriors } from "./hierarchy.ts";
import { covarianceFromCholesky, factorSpd } from "./linalg.ts";

/** Gaussians moment-matched to the weighted mixture of `components`; cavities, τ and the prior scales stay those of `chosen`. */
export function mixPosteriors(d: number, chosen: Posteriors, components: { weight: number; posteriors: Posteriors }[]): Posteriors {
  if (components.length === 1) return chosen;
  const mix = (pick: (p: Posteriors) => Gaussian, where: string) => mixGaussians(d, components.map((c) => ({ weight: c.weight, gaussian: pick(c.posteriors) })), where);
  const segments = new Map<string, Gaussian>();
  for (const segment of chosen.segments.keys()) segments.set(segment, mix((p) => p.segments.get(segment)!, `the posterior of segment "${segment}"`));
  return { ...chosen, pooled: mix((p) => p.pooled, "the pooled posterior"), star: mix((p) => p.star, "the new-segment posterior"), segments };
}

/** The Gaussian with the mean and covariance of a mixture of Gaussians (weights summing to 1). */
export function mixGaussians(d: number, parts: { weight: number; gaussian: Gaussian }[], where: string): Gaussian {
  const mean = new Float64Array(d);
  for (const { weight, gaussian } of parts) for (let i = 0; i < d; i++) mean[i] += weight * gaussian.mean[i];
  const cov = new Float64Array(d * d);
  const dev = new Float64Array(d);
  for (const { weight, gaussian } of parts) {
    const c = covarianceFromCholesky(gaussian.chol, d);
    for (let i = 0; i < d; i++) dev[i] = gaussian.mean[i] - mean[i];
    for (let i = 0; i < d; i++) {
      const row = i * d;
      for (let j = 0; j < d; j++) cov[row + j] += weight * (c[row + j] + dev[i] * dev[j]);
    }
  }
  const precision = covarianceFromCholesky(factorSpd(cov, d, where), d);
  return { precision, mean, chol: factorSpd(precision, d, where) };
}
