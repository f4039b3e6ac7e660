/**
 * Numerically stable logistic functions. log σ(x) = −log(1 + e^{−x}) is evaluated as
 * −log1p(e^{−x}) for x ≥ 0 and x − log1p(e^{x}) for x < 0 so that neither branch overflows
 * (Mächler, "Accurately computing log(1 − exp(−|a|))", Rmpfr vignette, 2012, §3 on log1pexp).
 */
export function logSigmoid(x: number): number {
  return x >= 0 ? -Math.log1p(Math.exp(-x)) : x - Math.log1p(Math.exp(x));
}

/** log(1 − σ(x)) = log σ(−x). */
export function logOneMinusSigmoid(x: number): number {
  return logSigmoid(-x);
}

export function sigmoid(x: number): number {
  if (x >= 0) return 1 / (1 + Math.exp(-x));
  const e = Math.exp(x);
  return e / (1 + e);
}

/** σ(x)(1 − σ(x)) without cancellation for large |x|. */
export function sigmoidVariance(x: number): number {
  const e = Math.exp(-Math.abs(x));
  return e / ((1 + e) * (1 + e));
}
