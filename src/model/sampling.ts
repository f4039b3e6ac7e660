/**
 * Posterior draws θ ~ N(μ, P⁻¹) from the Cholesky factor of the precision P = L Lᵀ:
 * θ = μ + L⁻ᵀ z with z ~ N(0, I), since Cov(L⁻ᵀz) = L⁻ᵀL⁻¹ = P⁻¹ (Rue & Held, Gaussian Markov
 * Random Fields, 2005, Algorithm 2.4). Sampling from the precision avoids ever inverting P.
 *
 * The draws are stored feature-major: feature j of draw s is at j·M + s, so the back substitution,
 * and every later sum of features over all draws, runs along contiguous rows of length M.
 */
import type { Gaussian } from "./hierarchy.ts";
import type { Rng } from "./rng.ts";

/** M draws as a (d+1) × M feature-major array; row d is all 0 (for padded feature indices). */
export function drawSamples(g: Gaussian, d: number, samples: number, rng: Rng): Float64Array {
  const M = samples;
  const out = new Float64Array((d + 1) * M);
  // z in draw order (draw by draw), so a seed gives the same draws whatever the layout.
  for (let s = 0; s < M; s++) for (let i = 0; i < d; i++) out[i * M + s] = rng.normal();
  // Back substitution Lᵀ x = z on all draws at once: x_i = (z_i − Σ_{k>i} L_ki x_k) / L_ii.
  for (let i = d - 1; i >= 0; i--) {
    const xi = i * M;
    for (let k = i + 1; k < d; k++) {
      const lki = g.chol[k * d + i];
      if (lki === 0) continue;
      const xk = k * M;
      for (let s = 0; s < M; s++) out[xi + s] -= lki * out[xk + s];
    }
    const lii = g.chol[i * d + i];
    for (let s = 0; s < M; s++) out[xi + s] /= lii;
  }
  for (let i = 0; i < d; i++) {
    const mean = g.mean[i];
    for (let s = i * M, end = s + M; s < end; s++) out[s] = mean + out[s];
  }
  return out;
}

/**
 * Draws from N(μ, α²Σ) made from draws of N(μ, Σ): μ + α(θ − μ), row by row (feature-major, as
 * drawSamples). `mean` has length d + 1 with a 0 in slot d, so the zero row stays zero.
 */
export function temperDraws(samples: Float64Array, mean: Float64Array, d: number, count: number, scale: number): Float64Array {
  const out = new Float64Array(samples.length);
  for (let j = 0; j < d; j++) {
    const m = mean[j];
    for (let s = j * count, end = s + count; s < end; s++) out[s] = m + scale * (samples[s] - m);
  }
  return out;
}
