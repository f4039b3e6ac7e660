/**
 * From sites to posteriors: the hierarchical model θ_s = β + δ_s, δ_s ~ N(0, T), β ~ N(μ0, P0⁻¹),
 * T = diag(τ0², τ², …, τ²) (τ0 = segmentInterceptSpread for the intercept, τ = segmentSpread for
 * every effect), where segment s's data enter only through its Gaussian site (Λ_s, η_s) — the
 * accumulated information of its folds about θ_s (see fold.ts). Each segment's data are counted
 * once: in the pooled posterior through δ_s's extra variance, and in the segment's own posterior
 * through a leave-one-out prior that excludes them.
 *
 * Pooled β: a site seen through δ_s has precision (Λ_s⁻¹ + T)⁻¹ and natural mean (I + Λ_sT)⁻¹η_s
 * (for T = τ²I these are (I + τ²Λ_s)⁻¹Λ_s and (I + τ²Λ_s)⁻¹η_s); both are computed without
 * inverting Λ_s, so they stay valid for singular Λ_s:
 *   P_β = P0 + Σ_s (Λ_s⁻¹ + T)⁻¹,   h_β = P0μ0 + Σ_s (I + Λ_sT)⁻¹η_s.
 * Segment s: the leave-one-out pooled posterior (P_−s, h_−s) = (P_β, h_β) minus s's term,
 * widened by T into a prior on θ_s: Q_s = (P_−s⁻¹ + T)⁻¹, hQ_s = (I + P_−sT)⁻¹h_−s,
 * then P_s = Q_s + Λ_s, h_s = hQ_s + η_s.
 * Unseen segments and the "*" allocation: the pooled model predicting a new segment,
 * N(μ_β, P_β⁻¹ + T).
 *
 * This is Gaussian message passing on a two-level normal hierarchy (Gelman et al., Bayesian
 * Data Analysis, 3rd ed. 2013, §5.4 for the hierarchical normal model; the site/cavity
 * construction follows expectation propagation, Minka 2001, "A family of algorithms for
 * approximate Bayesian inference", MIT PhD thesis, ch. 3).
 */
import type { Design } from "./design.ts";
import { choleskySolve, factorSpd, forwardSolve, symmetrize } from "./linalg.ts";
import { priorFor } from "./prior.ts";
import type { PageSettings } from "./settings.ts";
import type { Site } from "./state.ts";

/** A Gaussian N(mean, precision⁻¹) with the Cholesky factor of its precision. */
export interface Gaussian {
  precision: Float64Array;
  mean: Float64Array;
  chol: Float64Array;
}

export interface Posteriors {
  /** β's posterior (the pooled coefficients). */
  pooled: Gaussian;
  /** A new segment's θ: N(μ_β, P_β⁻¹ + T). */
  star: Gaussian;
  /** θ_s for every site. */
  segments: Map<string, Gaussian>;
}

/**
 * A Gaussian "seen through" δ's extra variance T = S² (S diagonal): given natural parameters
 * (A, v) returns ((A⁻¹ + T)⁻¹, (I + AT)⁻¹v), computed without inverting A (valid for singular A)
 * by the push-through identity (I + AT)⁻¹ = I − AS(I + SAS)⁻¹S (Henderson & Searle, SIAM Review
 * 23(1), 1981): with B = I + SAS = LLᵀ and Y = L⁻¹SA, the results are A − YᵀY and v − YᵀL⁻¹Sv.
 */
export function widen(a: Float64Array, d: number, spread: Float64Array, v: Float64Array, where: string): { m: Float64Array; v: Float64Array } {
  const b = new Float64Array(d * d);
  for (let i = 0; i < d; i++) {
    for (let j = 0; j < d; j++) b[i * d + j] = spread[i] * a[i * d + j] * spread[j];
    b[i * d + i] += 1;
  }
  const l = factorSpd(b, d, where);
  // Y = L⁻¹ S A, column by column (forward substitution on the columns of SA), stored row-major.
  const y = new Float64Array(d * d);
  for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) y[i * d + j] = spread[i] * a[i * d + j];
  for (let i = 0; i < d; i++) {
    const li = i * d;
    for (let k = 0; k < i; k++) {
      const f = l[li + k];
      if (f === 0) continue;
      const yk = k * d;
      for (let j = 0; j < d; j++) y[li + j] -= f * y[yk + j];
    }
    const inv = 1 / l[li + i];
    for (let j = 0; j < d; j++) y[li + j] *= inv;
  }
  const m = a.slice();
  for (let k = 0; k < d; k++) {
    const yk = k * d;
    for (let i = 0; i < d; i++) {
      const f = y[yk + i];
      if (f === 0) continue;
      for (let j = i; j < d; j++) m[i * d + j] -= f * y[yk + j];
    }
  }
  for (let i = 0; i < d; i++) for (let j = 0; j < i; j++) m[i * d + j] = m[j * d + i];
  const sv = Float64Array.from(v, (x, i) => spread[i] * x);
  forwardSolve(l, d, sv);
  const out = v.slice();
  for (let k = 0; k < d; k++) for (let i = 0; i < d; i++) out[i] -= y[k * d + i] * sv[k];
  return { m, v: out };
}

function gaussianFromNatural(precision: Float64Array, h: Float64Array, d: number, where: string): Gaussian {
  const chol = factorSpd(precision, d, where);
  return { precision, mean: choleskySolve(chol, d, h), chol };
}

/**
 * Posteriors of the pooled model, of a new segment, and of the segments in `only` (default:
 * every site).
 */
export function computePosteriors(design: Design, settings: PageSettings, sites: Map<string, Site>, only?: Iterable<string>): Posteriors {
  const d = design.dimension;
  const spread = segmentSpreads(design, settings);
  const prior = priorFor(design, settings);
  const pBeta = new Float64Array(d * d);
  const hBeta = Float64Array.from(prior.precisionMean);
  for (let i = 0; i < d; i++) pBeta[i * d + i] = prior.precision[i];
  const terms = new Map<string, { m: Float64Array; v: Float64Array }>();
  for (const [segment, site] of sites) {
    const term = widen(site.lambda, d, spread, site.eta, `the pooled posterior (segment "${segment}")`);
    terms.set(segment, term);
    for (let i = 0; i < d * d; i++) pBeta[i] += term.m[i];
    for (let i = 0; i < d; i++) hBeta[i] += term.v[i];
  }
  const pooled = gaussianFromNatural(pBeta.slice(), hBeta.slice(), d, "the pooled posterior");
  const starTerm = widen(pBeta, d, spread, hBeta, "the new-segment posterior");
  const star = gaussianFromNatural(starTerm.m, starTerm.v, d, "the new-segment posterior");

  const segments = new Map<string, Gaussian>();
  for (const segment of only ?? sites.keys()) {
    const site = sites.get(segment);
    const term = terms.get(segment);
    if (!site || !term) continue;
    const where = `the posterior of segment "${segment}"`;
    const pLoo = new Float64Array(d * d);
    const hLoo = new Float64Array(d);
    for (let i = 0; i < d * d; i++) pLoo[i] = pBeta[i] - term.m[i];
    for (let i = 0; i < d; i++) hLoo[i] = hBeta[i] - term.v[i];
    symmetrize(pLoo, d);
    const q = widen(pLoo, d, spread, hLoo, where);
    for (let i = 0; i < d * d; i++) q.m[i] += site.lambda[i];
    for (let i = 0; i < d; i++) q.v[i] += site.eta[i];
    segments.set(segment, gaussianFromNatural(q.m, q.v, d, where));
  }
  return { pooled, star, segments };
}

/**
 * Prior sd of δ_s per coefficient: segmentInterceptSpread for the intercept (traffic sources differ
 * most in their overall level), segmentSpread for every effect.
 */
export function segmentSpreads(design: Design, settings: PageSettings): Float64Array {
  const spread = new Float64Array(design.dimension).fill(settings.segmentSpread);
  spread[0] = settings.segmentInterceptSpread;
  return spread;
}

/** The posterior of a segment that has no site yet: its prior, which is the new-segment posterior. */
export function segmentPosterior(post: Posteriors, segment: string): Gaussian {
  return post.segments.get(segment) ?? post.star;
}
