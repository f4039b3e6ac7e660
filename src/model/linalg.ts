/**
 * Dense symmetric positive-definite linear algebra on row-major Float64Array (d×d), written out
 * because the fold and the sampler call it in hot loops at d ≤ a few hundred where a general
 * matrix library's allocation overhead dominates. Cholesky–Banachiewicz factorisation and
 * triangular solves as in Golub & Van Loan, Matrix Computations, 4th ed. 2013, §4.2.
 *
 * `factorSpd` is the only entry that accepts a matrix from the model: it checks finiteness,
 * symmetrises, and when the factorisation fails adds a growing diagonal jitter (a standard
 * repair, cf. Higham, "Computing a nearest symmetric positive semidefinite matrix", 1988, for the
 * idea of moving to the nearest acceptable matrix); if even that fails it throws
 * NUMERICAL_FAILURE so no NaN ever leaves the model.
 */
import { fail } from "../errors.ts";

/**
 * Lower Cholesky factor L with A = L Lᵀ, or null when A is not (numerically) positive definite.
 * Written into `out` when given (a work buffer of length d², overwritten), else into a new array.
 */
export function cholesky(a: Float64Array, d: number, out?: Float64Array): Float64Array | null {
  const l = out ? out.fill(0, 0, d * d) : new Float64Array(d * d);
  for (let i = 0; i < d; i++) {
    const ri = i * d;
    for (let j = 0; j <= i; j++) {
      const rj = j * d;
      let s = a[ri + j] - dot(l, ri, l, rj, j);
      if (i === j) {
        if (!(s > 0)) return null;
        l[ri + i] = Math.sqrt(s);
      } else {
        l[ri + j] = s / l[rj + j];
      }
    }
  }
  return l;
}

/**
 * Σ_{k<n} x[i+k]·y[j+k], with four partial sums so consecutive multiply-adds do not wait on each
 * other (about twice as fast as one running sum in V8 at these sizes; the summation order differs,
 * so results may differ in the last bits).
 */
export function dot(x: Float64Array, i: number, y: Float64Array, j: number, n: number): number {
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  let k = 0;
  for (; k + 3 < n; k += 4) {
    s0 += x[i + k] * y[j + k];
    s1 += x[i + k + 1] * y[j + k + 1];
    s2 += x[i + k + 2] * y[j + k + 2];
    s3 += x[i + k + 3] * y[j + k + 3];
  }
  for (; k < n; k++) s0 += x[i + k] * y[j + k];
  return s0 + s1 + (s2 + s3);
}

/** (A + Aᵀ)/2 in place. */
export function symmetrize(a: Float64Array, d: number): void {
  for (let i = 0; i < d; i++) {
    for (let j = 0; j < i; j++) {
      const v = 0.5 * (a[i * d + j] + a[j * d + i]);
      a[i * d + j] = v;
      a[j * d + i] = v;
    }
  }
}

/**
 * Cholesky factor of a matrix that should be symmetric positive definite, repairing small
 * defects (asymmetry, round-off indefiniteness) in place; throws NUMERICAL_FAILURE otherwise.
 */
export function factorSpd(a: Float64Array, d: number, where: string, out?: Float64Array): Float64Array {
  for (let i = 0; i < a.length; i++) {
    if (!Number.isFinite(a[i])) throw fail("NUMERICAL_FAILURE", { where, reason: "a matrix entry is not finite" });
  }
  symmetrize(a, d);
  const first = cholesky(a, d, out);
  if (first) return first;
  let scale = 0;
  for (let i = 0; i < d; i++) scale = Math.max(scale, Math.abs(a[i * d + i]));
  if (!(scale > 0)) throw fail("NUMERICAL_FAILURE", { where, reason: "the matrix has a zero diagonal" });
  for (let jitter = scale * 1e-12; jitter <= scale * 1e-3; jitter *= 10) {
    for (let i = 0; i < d; i++) a[i * d + i] += jitter;
    const l = cholesky(a, d, out);
    if (l) return l;
    for (let i = 0; i < d; i++) a[i * d + i] -= jitter;
  }
  throw fail("NUMERICAL_FAILURE", { where, reason: "the matrix is not positive definite even after repair" });
}

/** Solves L y = b (forward substitution) in place on b. */
export function forwardSolve(l: Float64Array, d: number, b: Float64Array): void {
  for (let i = 0; i < d; i++) {
    let s = b[i];
    const ri = i * d;
    for (let k = 0; k < i; k++) s -= l[ri + k] * b[k];
    b[i] = s / l[ri + i];
  }
}

/** Solves Lᵀ x = y (back substitution) in place on y. */
export function backSolveTransposed(l: Float64Array, d: number, y: Float64Array): void {
  for (let i = d - 1; i >= 0; i--) {
    let s = y[i];
    for (let k = i + 1; k < d; k++) s -= l[k * d + i] * y[k];
    y[i] = s / l[i * d + i];
  }
}

/** x = A⁻¹ b given A's Cholesky factor (returns a new vector). */
export function choleskySolve(l: Float64Array, d: number, b: ArrayLike<number>): Float64Array {
  const x = Float64Array.from(b as ArrayLike<number>);
  forwardSolve(l, d, x);
  backSolveTransposed(l, d, x);
  return x;
}

/** X = A⁻¹ B for a d×d right-hand side B, given A's Cholesky factor (returns a new matrix). */
export function choleskySolveMatrix(l: Float64Array, d: number, b: Float64Array): Float64Array {
  // Work on columns of B, transposed into rows for contiguous access.
  const xt = new Float64Array(d * d);
  for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) xt[j * d + i] = b[i * d + j];
  const col = new Float64Array(d);
  for (let j = 0; j < d; j++) {
    for (let i = 0; i < d; i++) col[i] = xt[j * d + i];
    forwardSolve(l, d, col);
    backSolveTransposed(l, d, col);
    for (let i = 0; i < d; i++) xt[j * d + i] = col[i];
  }
  const x = new Float64Array(d * d);
  for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) x[i * d + j] = xt[j * d + i];
  return x;
}

/** A⁻¹ from A's Cholesky factor. */
export function choleskyInverse(l: Float64Array, d: number): Float64Array {
  const identity = new Float64Array(d * d);
  for (let i = 0; i < d; i++) identity[i * d + i] = 1;
  const inv = choleskySolveMatrix(l, d, identity);
  symmetrize(inv, d);
  return inv;
}

/**
 * A⁻¹ = L⁻ᵀL⁻¹ from A's Cholesky factor with contiguous memory access: the columns of W = L⁻¹ by
 * forward substitution from their diagonal (d³/6), then (A⁻¹)ᵢⱼ = Σ_{m ≥ max(i,j)} W_mi W_mj (d³/6).
 * Several times faster than `choleskyInverse`, whose back substitution walks L by columns.
 * `work`, when given, is a d² buffer used for W (overwritten; only entries at or below the
 * diagonal of each column are written and read).
 */
export function covarianceFromCholesky(l: Float64Array, d: number, work?: Float64Array): Float64Array {
  const w = work ?? new Float64Array(d * d); // column j of W at w[j·d …]
  for (let j = 0; j < d; j++) {
    const c = j * d;
    w[c + j] = 1 / l[j * d + j];
    for (let i = j + 1; i < d; i++) {
      const ri = i * d;
      w[c + i] = -dot(l, ri + j, w, c + j, i - j) / l[ri + i];
    }
  }
  const out = new Float64Array(d * d);
  for (let i = 0; i < d; i++) {
    for (let j = i; j < d; j++) {
      const s = dot(w, i * d + j, w, j * d + j, d - j);
      out[i * d + j] = s;
      out[j * d + i] = s;
    }
  }
  return out;
}

/** Diagonal of A⁻¹ from A's Cholesky factor: A⁻¹ = L⁻ᵀL⁻¹, so (A⁻¹)_jj = ‖L⁻¹ e_j‖². */
export function inverseDiagonal(l: Float64Array, d: number): Float64Array {
  const out = new Float64Array(d);
  const e = new Float64Array(d);
  for (let j = 0; j < d; j++) {
    e.fill(0);
    e[j] = 1;
    forwardSolve(l, d, e);
    let s = 0;
    for (let i = j; i < d; i++) s += e[i] * e[i]; // L⁻¹ is lower triangular: entries above j are 0
    out[j] = s;
  }
  return out;
}

/** y = A x for a d×d matrix. */
export function matVec(a: Float64Array, d: number, x: ArrayLike<number>): Float64Array {
  const y = new Float64Array(d);
  for (let i = 0; i < d; i++) {
    let s = 0;
    const ri = i * d;
    for (let j = 0; j < d; j++) s += a[ri + j] * x[j];
    y[i] = s;
  }
  return y;
}
