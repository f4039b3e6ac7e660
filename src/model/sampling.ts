/**
 * Posterior draws θ ~ N(μ, P⁻¹) from the Cholesky factor of the precision P = L Lᵀ:
 * θ = μ + L⁻ᵀ z with z ~ N(0, I), since Cov(L⁻ᵀz) = L⁻ᵀL⁻¹ = P⁻¹ (Rue & Held, Gaussian Markov
 * Random Fields, 2005, Algorithm 2.4). Sampling from the precision avoids ever inverting P.
 */
import type { Gaussian } from "./hierarchy.ts";
import type { Rng } from "./rng.ts";

/** M draws in an M × (d+1) row-major array; slot d of every row is 0 (for padded feature indices). */
export function drawSamples(g: Gaussian, d: number, samples: number, rng: Rng): Float64Array {
  const stride = d + 1;
  const out = new Float64Array(samples * stride);
  // Lᵀ row-major, so the back substitution reads contiguously.
  const u = new Float64Array(d * d);
  for (let i = 0; i < d; i++) for (let k = 0; k <= i; k++) u[k * d + i] = g.chol[i * d + k];
  const z = new Float64Array(d);
  for (let s = 0; s < samples; s++) {
    for (let i = 0; i < d; i++) z[i] = rng.normal();
    // Back substitution Lᵀ x = z.
    for (let i = d - 1; i >= 0; i--) {
      let acc = z[i];
      const ri = i * d;
      for (let k = i + 1; k < d; k++) acc -= u[ri + k] * z[k];
      z[i] = acc / u[ri + i];
    }
    const row = s * stride;
    for (let i = 0; i < d; i++) out[row + i] = g.mean[i] + z[i];
  }
  return out;
}
