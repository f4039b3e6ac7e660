/**
 * Laplace approximation of a Bayesian logistic regression on aggregated binomial rows.
 *
 * Minimises the negative log posterior (prior N(P⁻¹h, P⁻¹) given in natural form (P, h), so a
 * singular-free precision is all it needs; up to a constant ½(θ−μ)ᵀP(θ−μ) = ½θᵀPθ − hᵀθ)
 *   f(θ) = ½θᵀPθ − hᵀθ − Σ_r [k_r log σ(x_rᵀθ) + (n_r−k_r) log(1−σ(x_rᵀθ))]
 * by damped Newton steps (step halving until the Armijo condition holds; Nocedal & Wright,
 * Numerical Optimization, 2nd ed. 2006, §3.1 and §3.5), then returns the mode and the precision
 * at the mode, P + Σ n_r p_r(1−p_r) x_r x_rᵀ (the Laplace approximation: Bishop, Pattern
 * Recognition and Machine Learning, 2006, §4.4 and §4.5.1). Rows with equal features are merged
 * beforehand, which is lossless for categorical features, so the cost depends on the number of
 * distinct combinations, not on visitors.
 */
import { fail } from "../errors.ts";
import { choleskySolve, factorSpd } from "./linalg.ts";
import { logSigmoid, sigmoid, sigmoidVariance } from "./logistic.ts";

/**
 * Aggregated rows in sparse form: row r's features are idx[r*m … r*m+m) (padded with index d,
 * whose coefficient slot is always 0) with values x[…] (1 for the design's indicator features).
 */
export interface RowBlock {
  count: number;
  m: number;
  idx: Int32Array;
  x: Float64Array;
  n: Float64Array;
  k: Float64Array;
}

export interface LaplaceResult {
  mode: Float64Array;
  /** Posterior precision at the mode. */
  precision: Float64Array;
  /** Σ n p(1−p) x xᵀ at the mode (the data part of the precision). */
  dataPrecision: Float64Array;
  choleskyFactor: Float64Array;
  iterations: number;
}

const MAX_ITERATIONS = 100;
const MAX_HALVINGS = 40;

/** A Gaussian prior in natural form: precision P (d×d row-major) and h = P·mean. */
export interface NaturalPrior {
  precision: Float64Array;
  precisionMean: Float64Array;
}

function negLogPosterior(theta: Float64Array, d: number, p: Float64Array, h: Float64Array, rows: RowBlock): number {
  let prior = 0;
  for (let i = 0; i < d; i++) {
    let s = 0;
    for (let j = 0; j < d; j++) s += p[i * d + j] * theta[j];
    prior += theta[i] * s - 2 * h[i] * theta[i];
  }
  let loglik = 0;
  const { m, idx, x, n, k } = rows;
  for (let r = 0; r < rows.count; r++) {
    let eta = 0;
    for (let a = r * m, end = a + m; a < end; a++) eta += theta[idx[a]] * x[a];
    // = k log σ(η) + (n−k) log(1−σ(η)), written so that rows with k > n (a conversion folded
    // after its trial) need no special case
    loglik += k[r] * eta + n[r] * logSigmoid(-eta);
  }
  return 0.5 * prior - loglik;
}

/** Σ w_r x_r x_rᵀ with w_r = n_r p_r (1−p_r) at θ (upper and lower triangles filled). */
function dataHessian(theta: Float64Array, d: number, rows: RowBlock): Float64Array {
  const h = new Float64Array(d * d);
  const { m, idx, x, n } = rows;
  for (let r = 0; r < rows.count; r++) {
    const base = r * m;
    let eta = 0;
    for (let a = base; a < base + m; a++) eta += theta[idx[a]] * x[a];
    const w = n[r] * sigmoidVariance(eta);
    if (w === 0) continue;
    for (let a = base; a < base + m; a++) {
      const i = idx[a];
      if (i === d) continue;
      const wi = w * x[a];
      for (let b = base; b < base + m; b++) {
        const j = idx[b];
        if (j !== d) h[i * d + j] += wi * x[b];
      }
    }
  }
  return h;
}

/**
 * Posterior mode and Laplace precision for the prior (natural form) and the given rows, Newton
 * started from `start` (a warm start: the last fold's mode) or else from the prior mean. `d` is
 * the dimension; θ vectors carry one extra always-zero slot at index d for padded features.
 */
export function laplaceFit(prior: NaturalPrior, d: number, rows: RowBlock, where = "the fold", start?: Float64Array): LaplaceResult {
  const p = prior.precision;
  const h = prior.precisionMean;
  const theta = new Float64Array(d + 1);
  theta.set(start ? start.subarray(0, d) : choleskySolve(factorSpd(p, d, where), d, h));
  let f = negLogPosterior(theta, d, p, h, rows);
  const grad = new Float64Array(d);
  const trial = new Float64Array(d + 1);
  let iterations = 0;
  for (; iterations < MAX_ITERATIONS; iterations++) {
    // Gradient of f: Pθ − h − Σ (k − n p) x.
    for (let i = 0; i < d; i++) {
      let s = -h[i];
      for (let j = 0; j < d; j++) s += p[i * d + j] * theta[j];
      grad[i] = s;
    }
    const { m, idx, x, n, k } = rows;
    for (let r = 0; r < rows.count; r++) {
      let eta = 0;
      for (let a = r * m; a < r * m + m; a++) eta += theta[idx[a]] * x[a];
      const resid = k[r] - n[r] * sigmoid(eta);
      for (let a = r * m; a < r * m + m; a++) if (idx[a] !== d) grad[idx[a]] -= resid * x[a];
    }
    const hessian = dataHessian(theta, d, rows);
    for (let i = 0; i < d * d; i++) hessian[i] += p[i];
    const l = factorSpd(hessian, d, where);
    // Newton direction Δ = −H⁻¹ g.
    const step = Float64Array.from(grad);
    for (let i = 0; i < d; i++) {
      let s = step[i];
      for (let q = 0; q < i; q++) s -= l[i * d + q] * step[q];
      step[i] = s / l[i * d + i];
    }
    for (let i = d - 1; i >= 0; i--) {
      let s = step[i];
      for (let q = i + 1; q < d; q++) s -= l[q * d + i] * step[q];
      step[i] = s / l[i * d + i];
    }
    let slope = 0; // gᵀΔ with Δ = −step
    for (let i = 0; i < d; i++) slope -= grad[i] * step[i];
    if (-slope < 1e-14 * (1 + Math.abs(f))) break; // Newton decrement² ≈ 0: converged
    let t = 1;
    let accepted = false;
    for (let halving = 0; halving < MAX_HALVINGS; halving++) {
      for (let i = 0; i < d; i++) trial[i] = theta[i] - t * step[i];
      const ft = negLogPosterior(trial, d, p, h, rows);
      if (Number.isFinite(ft) && ft <= f + 1e-4 * t * slope) {
        theta.set(trial.subarray(0, d));
        f = ft;
        accepted = true;
        break;
      }
      t *= 0.5;
    }
    if (!accepted) break; // no decrease possible at machine precision: at the mode
  }
  for (let i = 0; i < d; i++) {
    if (!Number.isFinite(theta[i])) throw fail("NUMERICAL_FAILURE", { where, reason: "the posterior mode is not finite" });
  }
  const dataPrecision = dataHessian(theta, d, rows);
  const precision = new Float64Array(d * d);
  for (let i = 0; i < d * d; i++) precision[i] = p[i] + dataPrecision[i];
  const choleskyFactor = factorSpd(precision, d, where);
  return { mode: theta.subarray(0, d).slice(), precision, dataPrecision, choleskyFactor, iterations };
}

/**
 * The likelihood's Gaussian site at θ̂ (Laplace propagation: Smola, Vishwanathan & Eskin,
 * "Laplace Propagation", NIPS 2003): the second-order expansion of the log-likelihood ℓ around θ̂,
 * ℓ(θ) ≈ const + ηᵀθ − ½θᵀΛθ with Λ = −∇²ℓ(θ̂) = Σ n p(1−p) x xᵀ and η = ∇ℓ(θ̂) + Λθ̂,
 * ∇ℓ = Σ (k − n p) x. At the mode θ̂ of prior × likelihood, prior × site has the same mode and the
 * Laplace precision there, so the site stands in for the data in the hierarchy (hierarchy.ts).
 */
export function likelihoodSite(d: number, rows: RowBlock, theta: Float64Array): { lambda: Float64Array; eta: Float64Array } {
  const at = new Float64Array(d + 1);
  at.set(theta.subarray(0, d));
  const lambda = dataHessian(at, d, rows);
  const eta = new Float64Array(d);
  const { m, idx, x, n, k } = rows;
  for (let r = 0; r < rows.count; r++) {
    let s = 0;
    for (let a = r * m; a < r * m + m; a++) s += at[idx[a]] * x[a];
    const resid = k[r] - n[r] * sigmoid(s);
    for (let a = r * m; a < r * m + m; a++) if (idx[a] !== d) eta[idx[a]] += resid * x[a];
  }
  for (let i = 0; i < d; i++) {
    let s = 0;
    for (let j = 0; j < d; j++) s += lambda[i * d + j] * at[j];
    eta[i] += s;
  }
  return { lambda, eta };
}
