/**
 * From sites to posteriors: the hierarchical model θ_s = β + δ_s, δ_s ~ N(0, T), β ~ N(μ0, P0⁻¹),
 * T = diag(τ0², τ², …, τ²) (τ0 = segmentInterceptSpread for the intercept, τ for every effect:
 * learned around segmentSpread, see below), where segment s's data enter only through its Gaussian site (Λ_s, η_s) — the
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
 * τ is learned (spreadSearch.ts) by maximising, over a grid around segmentSpread, the log marginal
 * likelihood of the sites under T plus a hyperprior. With a site read as the unnormalised likelihood
 * exp(ηᵀθ − ½θᵀΛθ), completing squares gives, up to terms free of T,
 *   log Z(T) = Σ_s [−½ log|I + SΛ_sS| + ½ |L_s⁻¹Sη_s|²] − ½ log|P_β| + ½ h_βᵀ P_β⁻¹ h_β,
 * where L_sL_sᵀ = I + SΛ_sS is the factor `widen` already computes (S = T^½).
 *
 * This is Gaussian message passing on a two-level normal hierarchy (Gelman et al., Bayesian
 * Data Analysis, 3rd ed. 2013, §5.4 for the hierarchical normal model; the site/cavity
 * construction follows expectation propagation, Minka 2001, "A family of algorithms for
 * approximate Bayesian inference", MIT PhD thesis, ch. 3).
 */
import type { Design } from "./design.ts";
import type { NaturalPrior } from "./newton.ts";
import { choleskySolve, covarianceFromCholesky, factorSpd, symmetrize } from "./linalg.ts";
import { type DiagonalPrior, priorFor } from "./prior.ts";
import { type PriorScales, searchPriorScales, UNIT_SCALES } from "./priorScaleSearch.ts";
import type { PageSettings } from "./settings.ts";
import { nearestStep, searchSpread, spreadFactor, spreadPosterior } from "./spreadSearch.ts";
import { mixPosteriors } from "./spreadMixture.ts";
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
  /** θ_s's prior before its own data (the leave-one-out cavity Q_s, hQ_s), for every site. */
  cavities: Map<string, NaturalPrior>;
  /** τ in use: segmentSpread as learned from the sites (spreadSearch.ts). */
  segmentSpread: number;
  /** The prior scales' multiples in use (priorScaleSearch.ts). */
  priorScales: PriorScales;
  /** log Z of the sites under this τ and these scales (up to terms free of both): τ's posterior weight (spreadSearch.ts). */
  logEvidence: number;
}

/**
 * A Gaussian "seen through" δ's extra variance T = S² (S diagonal): given natural parameters
 * (A, v) returns ((A⁻¹ + T)⁻¹, (I + AT)⁻¹v), computed without inverting A (valid for singular A).
 * With B = I + SAS = LLᵀ, the push-through identity (I + AT)⁻¹ = I − AS B⁻¹S (Henderson & Searle,
 * SIAM Review 23(1), 1981) gives the mean part v − AS B⁻¹Sv, and, when every spread is positive,
 * (A⁻¹ + T)⁻¹ = S⁻¹(I − B⁻¹)S⁻¹ (from A − ASB⁻¹SA with SAS = B − I): one factorisation and one
 * inverse, d³/2 multiply-adds. Below MIN_SPREAD that form loses digits to the 1/s² factor, and
 * the precision part is computed as A − YᵀY with Y = L⁻¹SA instead (7d³/6).
 * Also returns the site's T-dependent share of the log evidence, −log|L| + ½|L⁻¹Sv|².
 */
export function widen(a: Float64Array, d: number, spread: Float64Array, v: Float64Array, where: string): Widened {
  const b = workBuffer(0, d * d);
  for (let i = 0; i < d; i++) {
    for (let j = 0; j < d; j++) b[i * d + j] = spread[i] * a[i * d + j] * spread[j];
    b[i * d + i] += 1;
  }
  const l = factorSpd(b, d, where, workBuffer(1, d * d));
  const sv = Float64Array.from(v, (x, i) => spread[i] * x);
  let logEvidence = 0;
  for (let i = 0; i < d; i++) logEvidence -= Math.log(l[i * d + i]);
  // u = B⁻¹Sv; |L⁻¹Sv|² = (Sv)ᵀu
  const u = choleskySolve(l, d, sv);
  for (let i = 0; i < d; i++) logEvidence += 0.5 * sv[i] * u[i];
  const out = v.slice();
  for (let i = 0; i < d; i++) {
    let s = 0;
    for (let j = 0; j < d; j++) s += a[i * d + j] * spread[j] * u[j];
    out[i] -= s;
  }
  return { m: spread.every((s) => s >= MIN_SPREAD) ? precisionByInverse(l, d, spread) : precisionByPushThrough(a, l, d, spread), v: out, logEvidence };
}

/**
 * d² work buffers (slots 0–2: `widen`'s B, L and W = L⁻¹; slot 3: a leave-one-out precision
 * before it is widened), reused from call to call: a fold cycle of a large page widens thousands of
 * sites, and fresh d² arrays for each made garbage collection about a quarter of its time.
 * Nothing outside one call reads them.
 */
const work: Float64Array[] = [0, 1, 2, 3].map(() => new Float64Array(0));
function workBuffer(slot: number, length: number): Float64Array {
  if (work[slot].length < length) work[slot] = new Float64Array(length);
  return work[slot].subarray(0, length);
}

/** Smallest spread for which `widen` uses S⁻¹(I − B⁻¹)S⁻¹: its round-off is about ε/s² ≤ 2e-10 in absolute terms. */
const MIN_SPREAD = 1e-3;

function precisionByInverse(l: Float64Array, d: number, spread: Float64Array): Float64Array {
  const m = covarianceFromCholesky(l, d, workBuffer(2, d * d));
  for (let i = 0; i < d; i++) {
    for (let j = 0; j < d; j++) m[i * d + j] = ((i === j ? 1 : 0) - m[i * d + j]) / (spread[i] * spread[j]);
  }
  return m;
}

function precisionByPushThrough(a: Float64Array, l: Float64Array, d: number, spread: Float64Array): Float64Array {
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
  return m;
}

export interface Widened {
  m: Float64Array;
  v: Float64Array;
  logEvidence: number;
}

function gaussianFromNatural(precision: Float64Array, h: Float64Array, d: number, where: string): Gaussian {
  const chol = factorSpd(precision, d, where);
  return { precision, mean: choleskySolve(chol, d, h), chol };
}

/** A pooling: β's posterior under one τ and one pair of prior scales, with each site's widened term. */
export interface Pooled {
  spread: Float64Array;
  terms: Map<string, Widened>;
  pBeta: Float64Array;
  hBeta: Float64Array;
  pooled: Gaussian;
  scales: PriorScales;
  /** log Z(T, scales) up to terms free of both (see the header and priorScaleSearch.ts). */
  logEvidence: number;
}

interface SummedSites {
  spread: Float64Array;
  terms: Map<string, Widened>;
  /** Σ_s of the widened sites' natural parameters, and their share of the log evidence. */
  sum: Float64Array;
  sumH: Float64Array;
  logEvidence: number;
}

/** Every site seen through T = diag(spread²), summed. */
function sumSites(d: number, sites: Map<string, Site>, spread: Float64Array): SummedSites {
  const sum = new Float64Array(d * d);
  const sumH = new Float64Array(d);
  const terms = new Map<string, Widened>();
  let logEvidence = 0;
  for (const [segment, site] of sites) {
    const term = widen(site.lambda, d, spread, site.eta, `the pooled posterior (segment "${segment}")`);
    terms.set(segment, term);
    logEvidence += term.logEvidence;
    for (let i = 0; i < d * d; i++) sum[i] += term.m[i];
    for (let i = 0; i < d; i++) sumH[i] += term.v[i];
  }
  return { spread, terms, sum, sumH, logEvidence };
}

/** The summed sites times β's prior: β's posterior and the log evidence (header; priorScaleSearch.ts). */
function withPrior(d: number, summed: SummedSites, prior: DiagonalPrior): Omit<Pooled, "scales"> {
  const pBeta = summed.sum.slice();
  const hBeta = summed.sumH.slice();
  let logEvidence = summed.logEvidence;
  for (let i = 0; i < d; i++) {
    pBeta[i * d + i] += prior.precision[i];
    hBeta[i] += prior.precisionMean[i];
    // ½ log|P0| − ½ μ0ᵀP0μ0 (diagonal P0, μ0 = h0 / p0)
    logEvidence += 0.5 * Math.log(prior.precision[i]) - 0.5 * (prior.precisionMean[i] * prior.precisionMean[i]) / prior.precision[i];
  }
  const pooled = gaussianFromNatural(pBeta.slice(), hBeta.slice(), d, "the pooled posterior");
  for (let i = 0; i < d; i++) logEvidence += 0.5 * hBeta[i] * pooled.mean[i] - Math.log(pooled.chol[i * d + i]);
  return { spread: summed.spread, terms: summed.terms, pBeta, hBeta, pooled, logEvidence };
}

/** β's posterior with the prior scales as given, or learned (priorScaleSearch.ts) when `scales` is null. */
function poolSites(design: Design, settings: PageSettings, sites: Map<string, Site>, spread: Float64Array, scales: PriorScales | null, start?: PriorScales | null): Pooled {
  const d = design.dimension;
  const summed = sumSites(d, sites, spread);
  const at = (chosen: PriorScales): Pooled => ({ ...withPrior(d, summed, priorFor(design, settings, chosen)), scales: chosen });
  return scales !== null ? at(scales) : searchPriorScales(at, design.pairBase.length > 0, start ?? UNIT_SCALES).value;
}

/** The log evidence log Z(T) of the sites (up to terms free of T) under β's prior `prior`, for tests and diagnostics. */
export function logEvidence(d: number, prior: DiagonalPrior, sites: Map<string, Site>, spread: Float64Array): number {
  return withPrior(d, sumSites(d, sites, spread), prior).logEvidence;
}

/**
 * Which hyperparameters to use: τ and the prior scales as given (`learn` false; null means the
 * settings), or learned (`learn` true): τ by a search that starts at the grid step nearest `tau`,
 * the prior scales at each τ by a walk that starts at `scales` (priorScaleSearch.ts). With
 * `integrate`, the posteriors average over τ's posterior on the grid instead of using one τ
 * (spreadMixture.ts); the prior scales stay as chosen.
 */
export interface SpreadChoice {
  tau: number | null;
  scales?: PriorScales | null;
  learn: boolean;
  integrate?: boolean;
  /**
   * Filled with the poolings the τ search evaluated, by grid step, so that `integrateSpread` on
   * the same sites reuses them instead of widening every site again (refit.ts).
   */
  poolings?: Map<number, Pooled>;
}

/**
 * Posteriors of the pooled model, of a new segment, and of the segments in `only` (default:
 * every site), under the chosen segment spread (default: learned, starting from the setting).
 */
export function computePosteriors(
  design: Design,
  settings: PageSettings,
  sites: Map<string, Site>,
  only?: Iterable<string>,
  choice: SpreadChoice = { tau: null, learn: true },
): Posteriors {
  const scales = choice.learn ? null : (choice.scales ?? UNIT_SCALES);
  const at = (tau: number, chosen: PriorScales | null = scales): Pooled => poolSites(design, settings, sites, segmentSpreads(design, settings, tau), chosen, choice.scales);
  const setting = settings.segmentSpread;
  const pooled = !choice.learn
    ? at(choice.tau ?? setting)
    : !spreadIdentified(sites)
      ? at(setting)
      : searchSpread((k) => {
          const pool = at(setting * spreadFactor(k));
          choice.poolings?.set(k, pool);
          return pool;
        }, nearestStep(choice.tau, setting)).value;
  const chosen = posteriorsAt(design, settings, sites, pooled, [...(only ?? sites.keys())]);
  return choice.integrate ? integrateSpread(design, settings, sites, chosen, choice.poolings) : chosen;
}

/**
 * `chosen` (posteriors at one τ on the grid) averaged over τ's posterior on the grid, with the
 * prior scales fixed at chosen's (spreadSearch.ts `spreadPosterior`, spreadMixture.ts); unchanged
 * when τ is not identified (fewer than two segments with data) or not in use. `poolings` holds
 * poolings of these same sites already computed (SpreadChoice); those at chosen's prior scales are reused.
 */
export function integrateSpread(design: Design, settings: PageSettings, sites: Map<string, Site>, chosen: Posteriors, poolings?: Map<number, Pooled>): Posteriors {
  const setting = settings.segmentSpread;
  if (!spreadIdentified(sites) || !(setting > 0) || design.dimension < 2) return chosen;
  const step = nearestStep(chosen.segmentSpread, setting);
  const segments = [...chosen.segments.keys()];
  const weighted = spreadPosterior<{ logEvidence: number; pool: Pooled | null }>(step, (k) => {
    if (k === step) return { logEvidence: chosen.logEvidence, pool: null };
    const known = poolings?.get(k);
    if (known && known.scales.main === chosen.priorScales.main && known.scales.interaction === chosen.priorScales.interaction) return { logEvidence: known.logEvidence, pool: known };
    const pool = poolSites(design, settings, sites, segmentSpreads(design, settings, setting * spreadFactor(k)), chosen.priorScales);
    return { logEvidence: pool.logEvidence, pool };
  });
  return mixPosteriors(design.dimension, chosen, weighted.map(({ weight, value }) => ({ weight, posteriors: value.pool === null ? chosen : posteriorsAt(design, settings, sites, value.pool, segments) })));
}

/** τ is identified only from two or more segments with data; with fewer the setting is kept. */
function spreadIdentified(sites: Map<string, Site>): boolean {
  let withData = 0;
  for (const site of sites.values()) if (site.visitors > 0 && ++withData >= 2) return true;
  return false;
}

/** The posteriors under one pooling (one τ and one pair of prior scales). */
function posteriorsAt(design: Design, settings: PageSettings, sites: Map<string, Site>, pool: Pooled, only: string[]): Posteriors {
  const d = design.dimension;
  const { spread, terms, pBeta, hBeta, pooled, scales: priorScales } = pool;
  const starTerm = widen(pBeta, d, spread, hBeta, "the new-segment posterior");
  const star = gaussianFromNatural(starTerm.m, starTerm.v, d, "the new-segment posterior");

  const segments = new Map<string, Gaussian>();
  const cavities = new Map<string, NaturalPrior>();
  for (const segment of only) {
    const site = sites.get(segment);
    const term = terms.get(segment);
    if (!site || !term) continue;
    const where = `the posterior of segment "${segment}"`;
    const pLoo = workBuffer(3, d * d); // read only by the widen below
    const hLoo = new Float64Array(d);
    for (let i = 0; i < d * d; i++) pLoo[i] = pBeta[i] - term.m[i];
    for (let i = 0; i < d; i++) hLoo[i] = hBeta[i] - term.v[i];
    symmetrize(pLoo, d);
    const q = widen(pLoo, d, spread, hLoo, where);
    cavities.set(segment, { precision: q.m.slice(), precisionMean: q.v.slice() });
    for (let i = 0; i < d * d; i++) q.m[i] += site.lambda[i];
    for (let i = 0; i < d; i++) q.v[i] += site.eta[i];
    segments.set(segment, gaussianFromNatural(q.m, q.v, d, where));
  }
  return { pooled, star, segments, cavities, segmentSpread: spread.length > 1 ? spread[1] : settings.segmentSpread, priorScales, logEvidence: pool.logEvidence };
}

/**
 * Prior sd of δ_s per coefficient: segmentInterceptSpread for the intercept (traffic sources differ
 * most in their overall level), τ (default: the segmentSpread setting) for every effect.
 */
export function segmentSpreads(design: Design, settings: PageSettings, tau = settings.segmentSpread): Float64Array {
  const spread = new Float64Array(design.dimension).fill(tau);
  spread[0] = settings.segmentInterceptSpread;
  return spread;
}

/** The posterior of a segment that has no site yet: its prior, which is the new-segment posterior. */
export function segmentPosterior(post: Posteriors, segment: string): Gaussian {
  return post.segments.get(segment) ?? post.star;
}
