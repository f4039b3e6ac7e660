import { requireTrials } from "./argumentGuards.ts";
import { normalCdf } from "./normalCdf.ts";

export interface ZTestResult {
  /** (p̂₁ − p̂₂) / SE with the pooled standard error; positive when group 1 converts better. */
  z: number;
  /** Two-sided p-value 2·Φ(−|z|). */
  pValue: number;
}

/**
 * Two-proportion z-test with the pooled standard error, two-sided:
 * z = (x₁/n₁ − x₂/n₂) / √(p̄(1−p̄)(1/n₁ + 1/n₂)), p̄ = (x₁+x₂)/(n₁+n₂).
 * Its square equals Pearson's chi-square for the 2×2 table without continuity correction.
 *
 * Source: J. L. Fleiss, B. Levin & M. C. Paik (2003), "Statistical Methods for Rates and
 * Proportions", 3rd ed., ch. 4; A. Agresti (2002), "Categorical Data Analysis", 2nd ed., ch. 3.
 *
 * When both groups convert at 0% or both at 100% the standard error is 0 and there is nothing to
 * test: z = 0 and p = 1 rather than NaN. Throws INVALID_ARGUMENT for bad counts or n = 0.
 */
export function twoProportionZTest(x1: number, n1: number, x2: number, n2: number): ZTestResult {
  requireTrials("x1", x1, "n1", n1);
  requireTrials("x2", x2, "n2", n2);
  const pooled = (x1 + x2) / (n1 + n2);
  const se = Math.sqrt(pooled * (1 - pooled) * (1 / n1 + 1 / n2));
  if (se === 0) return { z: 0, pValue: 1 };
  const z = (x1 / n1 - x2 / n2) / se;
  return { z, pValue: Math.min(1, 2 * normalCdf(-Math.abs(z))) };
}
