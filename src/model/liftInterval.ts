import { requireOpenProbability, requireTrials } from "./argumentGuards.ts";
import { normalQuantile } from "./normalQuantile.ts";

export interface LiftEstimate {
  estimate: number;
  lower: number;
  upper: number;
  /** How the interval was computed, in words a report can show. */
  method: string;
}

export interface LiftInterval {
  /** p̂₁ − p̂₂, in rate units (0.01 = one percentage point). */
  absolute: LiftEstimate;
  /** p̂₁ / p̂₂ − 1 (0.10 = ten per cent better than group 2). */
  relative: LiftEstimate;
}

/**
 * Absolute and relative lift of group 1 over group 2 with a two-sided confidence interval.
 *
 * Absolute: Newcombe's hybrid score interval (method 10) for a difference of independent
 * proportions, built from the two Wilson score intervals. Source: R. G. Newcombe (1998),
 * "Interval estimation for the difference between independent proportions: comparison of eleven
 * methods", Statistics in Medicine 17:873–890; E. B. Wilson (1927), JASA 22:209–212. Unlike the
 * Wald interval it stays inside [−1, 1] and is sensible at 0 or 100% conversion.
 *
 * Relative: the delta method on the log risk ratio, SE(log RR) = √(1/x₁ − 1/n₁ + 1/x₂ − 1/n₂),
 * exponentiated and shifted by −1. Source: D. Katz, J. Baptista, S. P. Azen & M. C. Pike (1978),
 * Biometrics 34:469–474; A. Agresti (2002), "Categorical Data Analysis", 2nd ed., §3.1. The ratio is
 * undefined with zero conversions in either group, so then 0.5 is added to each conversion
 * count and 1 to each visitor count (Haldane's correction, the usual remedy; Agresti §3.1)
 * — for the estimate as well as the interval, so the estimate always lies inside it — and the
 * method says so.
 *
 * Throws INVALID_ARGUMENT for bad counts, n = 0, or a level outside (0, 1).
 */
export function liftInterval(x1: number, n1: number, x2: number, n2: number, level = 0.95): LiftInterval {
  requireTrials("x1", x1, "n1", n1);
  requireTrials("x2", x2, "n2", n2);
  requireOpenProbability("level", level);
  const z = normalQuantile(1 - (1 - level) / 2);
  const percent = `${+(level * 100).toFixed(4)}%`;

  const p1 = x1 / n1;
  const p2 = x2 / n2;
  const w1 = wilson(x1, n1, z);
  const w2 = wilson(x2, n2, z);
  const difference = p1 - p2;
  const absolute: LiftEstimate = {
    estimate: difference,
    lower: difference - Math.sqrt((p1 - w1.lower) ** 2 + (w2.upper - p2) ** 2),
    upper: difference + Math.sqrt((w1.upper - p1) ** 2 + (p2 - w2.lower) ** 2),
    method: `${percent} Newcombe hybrid score interval (Wilson-based) for the difference of rates`,
  };

  const corrected = x1 === 0 || x2 === 0;
  const [a, m, b, k] = corrected ? [x1 + 0.5, n1 + 1, x2 + 0.5, n2 + 1] : [x1, n1, x2, n2];
  const logRatio = Math.log(a / m) - Math.log(b / k);
  const se = Math.sqrt(1 / a - 1 / m + 1 / b - 1 / k);
  const relative: LiftEstimate = {
    estimate: Math.exp(logRatio) - 1,
    lower: Math.exp(logRatio - z * se) - 1,
    upper: Math.exp(logRatio + z * se) - 1,
    method:
      `${percent} delta-method interval on the log rate ratio` +
      (corrected ? " (0.5 added to each conversion count because one group has none)" : ""),
  };
  return { absolute, relative };
}

/** Wilson score interval for x successes in n trials at normal quantile z. */
function wilson(x: number, n: number, z: number): { lower: number; upper: number } {
  const z2 = z * z;
  const centre = (x + z2 / 2) / (n + z2);
  const half = (z / (n + z2)) * Math.sqrt((x * (n - x)) / n + z2 / 4);
  return { lower: Math.max(0, centre - half), upper: Math.min(1, centre + half) };
}
