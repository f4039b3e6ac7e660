import { requireOpenProbability } from "./argumentGuards.ts";
import { normalCdf } from "./normalCdf.ts";

// Coefficients of P. J. Acklam's rational approximations (central region and tails).
const A = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];
const B = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];
const C = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
const D = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];
const P_LOW = 0.02425;

/**
 * Standard normal quantile Φ⁻¹(p): the z with P(Z ≤ z) = p, for 0 < p < 1.
 *
 * Source: P. J. Acklam (2003), "An algorithm for computing the inverse normal cumulative
 * distribution function" (rational approximations, relative error ≤ 1.15e-9), followed by one
 * Halley step against normalCdf as Acklam recommends, which brings it to near full double
 * precision. Throws INVALID_ARGUMENT for p outside (0, 1).
 */
export function normalQuantile(p: number): number {
  requireOpenProbability("p", p);
  let x: number;
  if (p < P_LOW) {
    const q = Math.sqrt(-2 * Math.log(p));
    x = tail(q);
  } else if (p <= 1 - P_LOW) {
    const q = p - 0.5;
    const r = q * q;
    x = ((((((A[0] * r + A[1]) * r + A[2]) * r + A[3]) * r + A[4]) * r + A[5]) * q) /
      (((((B[0] * r + B[1]) * r + B[2]) * r + B[3]) * r + B[4]) * r + 1);
  } else {
    const q = Math.sqrt(-2 * Math.log(1 - p));
    x = -tail(q);
  }
  // Halley refinement: e = Φ(x) − p, u = e·√(2π)·exp(x²/2). Beyond |x| = 37 normalCdf
  // underflows to 0 and the step would do harm, so the raw approximation stands there.
  if (Math.abs(x) > 37) return x;
  const e = normalCdf(x) - p;
  const u = e * Math.sqrt(2 * Math.PI) * Math.exp((x * x) / 2);
  return x - u / (1 + (x * u) / 2);
}

/** Acklam's lower-tail approximation in q = √(−2 ln p). */
function tail(q: number): number {
  return (((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5]) /
    ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1);
}
