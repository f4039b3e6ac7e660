/**
 * From sites to posteriors: the hierarchical model θ_s = β + δ_s, δ_s ~ N(0, τ²I), β ~ N(μ0, P0⁻¹)
 * (τ = segmentSpread), where segment s's data enter only through its Gaussian site (Λ_s, η_s)
 * — the accumulated information of its folds about θ_s (see fold.ts). Each segment's data are
 * counted once: in the pooled posterior through δ_s's extra variance, and in the segment's own
 * posterior through a leave-one-out prior that excludes them.
 *
 * Pooled β: a site seen through δ_s has precision (Λ_s⁻¹ + τ²I)⁻¹ = (I + τ²Λ_s)⁻¹Λ_s and natural
 * mean (I + τ²Λ_s)⁻¹η_s, which stay valid for singular Λ_s (no inverse of Λ_s is formed), so
 *   P_β = P0 + Σ_s (I + τ²Λ_s)⁻¹Λ_s,   h_β = P0μ0 + Σ_s (I + τ²Λ_s)⁻¹η_s.
 * Segment s: the leave-one-out pooled posterior (P_−s, h_−s) = (P_β, h_β) minus s's term,
 * widened by τ² into a prior on θ_s: Q_s = (I + τ²P_−s)⁻¹P_−s, hQ_s = (I + τ²P_−s)⁻¹h_−s,
 * then P_s = Q_s + Λ_s, h_s = hQ_s + η_s.
 * Unseen segments and the "*" allocation: the pooled model predicting a new segment,
 * N(μ_β, P_β⁻¹ + τ²I), whose precision is (I + τ²P_β)⁻¹P_β.
 *
 * This is Gaussian message passing on a two-level normal hierarchy (Gelman et al., Bayesian
 * Data Analysis, 3rd ed. 2013, §5.4 for the hierarchical normal model; the site/cavity
 * construction follows expectation propagation, Minka 2001, "A family of algorithms for
 * approximate Bayesian inference", MIT PhD thesis, ch. 3).
 */
import type { Design } from "./design.ts";
import { choleskySolve, choleskySolveMatrix, factorSpd, symmetrize } from "./linalg.ts";
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
  /** A new segment's θ: N(μ_β, P_β⁻¹ + τ²I). */
  star: Gaussian;
  /** θ_s for every site. */
  segments: Map<string, Gaussian>;
}

/** (I + τ²A)⁻¹ applied to a matrix B and a vector b (A symmetric PSD). */
function shrink(a: Float64Array, d: number, tau2: number, b: Float64Array, v: Float64Array, where: string): { m: Float64Array; v: Float64Array } {
  if (tau2 === 0) return { m: b.slice(), v: v.slice() };
  const c = new Float64Array(d * d);
  for (let i = 0; i < d * d; i++) c[i] = tau2 * a[i];
  for (let i = 0; i < d; i++) c[i * d + i] += 1;
  const l = factorSpd(c, d, where);
  const m = choleskySolveMatrix(l, d, b);
  symmetrize(m, d); // (I+τ²A)⁻¹A is symmetric because the two factors commute
  return { m, v: choleskySolve(l, d, v) };
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
  const tau2 = settings.segmentSpread * settings.segmentSpread;
  const prior = priorFor(design, settings);
  const pBeta = new Float64Array(d * d);
  const hBeta = Float64Array.from(prior.precisionMean);
  for (let i = 0; i < d; i++) pBeta[i * d + i] = prior.precision[i];
  const terms = new Map<string, { m: Float64Array; v: Float64Array }>();
  for (const [segment, site] of sites) {
    const term = shrink(site.lambda, d, tau2, site.lambda, site.eta, `the pooled posterior (segment "${segment}")`);
    terms.set(segment, term);
    for (let i = 0; i < d * d; i++) pBeta[i] += term.m[i];
    for (let i = 0; i < d; i++) hBeta[i] += term.v[i];
  }
  const pooled = gaussianFromNatural(pBeta.slice(), hBeta.slice(), d, "the pooled posterior");
  const starTerm = shrink(pBeta, d, tau2, pBeta, hBeta, "the new-segment posterior");
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
    const q = shrink(pLoo, d, tau2, pLoo, hLoo, where);
    for (let i = 0; i < d * d; i++) q.m[i] += site.lambda[i];
    for (let i = 0; i < d; i++) q.v[i] += site.eta[i];
    segments.set(segment, gaussianFromNatural(q.m, q.v, d, where));
  }
  return { pooled, star, segments };
}

/** The posterior of a segment that has no site yet: its prior, which is the new-segment posterior. */
export function segmentPosterior(post: Posteriors, segment: string): Gaussian {
  return post.segments.get(segment) ?? post.star;
}
