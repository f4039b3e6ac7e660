import { fail } from "../errors.ts";
import { requireOpenProbability } from "./argumentGuards.ts";
import { normalQuantile } from "./normalQuantile.ts";

export interface SampleSizeInput {
  /** Conversion rate of one group (e.g. the baseline). */
  p1: number;
  /** Conversion rate of the other group (the rate you want to be able to detect). */
  p2: number;
  /** Family-wise significance level; default 0.05. */
  alpha?: number;
  /** Probability of detecting the difference if it is real; default 0.8. */
  power?: number;
  /** Number of comparisons sharing α (Bonferroni: each is tested at α / comparisons); default 1. */
  comparisons?: number;
  /** 2 for a two-sided test (default), 1 for one-sided. */
  sides?: 1 | 2;
}

/**
 * Visitors needed per group for a classic fixed-horizon two-proportion test, without continuity
 * correction, rounded up:
 *
 *   n = [z_{1−α'}·√(2·p̄·q̄) + z_{power}·√(p₁q₁ + p₂q₂)]² / (p₁ − p₂)²,
 *   p̄ = (p₁+p₂)/2, q = 1 − p, α' = α / (sides · comparisons).
 *
 * Source: J. L. Fleiss, B. Levin & M. C. Paik (2003), "Statistical Methods for Rates and
 * Proportions", 3rd ed., ch. 4 (the formula before their continuity correction; their
 * tables include it, so they read higher). The Bonferroni split of α over several comparisons is C. E. Bonferroni
 * (1936) / O. J. Dunn (1961). Throws INVALID_ARGUMENT for rates, α or power outside (0, 1), equal
 * rates, a comparison count that is not a positive whole number, or sides other than 1 or 2.
 */
export function sampleSizeTwoProportions(input: SampleSizeInput): number {
  const { p1, p2, alpha = 0.05, power = 0.8, comparisons = 1, sides = 2 } = input;
  requireOpenProbability("p1", p1);
  requireOpenProbability("p2", p2);
  requireOpenProbability("alpha", alpha);
  requireOpenProbability("power", power);
  if (p1 === p2) {
    throw fail("INVALID_ARGUMENT", { argument: "p2", reason: "must differ from p1: no sample detects a zero difference" }, "p2");
  }
  if (!Number.isInteger(comparisons) || comparisons < 1) {
    throw fail("INVALID_ARGUMENT", { argument: "comparisons", reason: `must be a whole number ≥ 1, got ${comparisons}` }, "comparisons");
  }
  if (sides !== 1 && sides !== 2) {
    throw fail("INVALID_ARGUMENT", { argument: "sides", reason: `must be 1 or 2, got ${String(sides)}` }, "sides");
  }
  const zAlpha = normalQuantile(1 - alpha / (sides * comparisons));
  const zPower = normalQuantile(power);
  const pBar = (p1 + p2) / 2;
  const root = zAlpha * Math.sqrt(2 * pBar * (1 - pBar)) + zPower * Math.sqrt(p1 * (1 - p1) + p2 * (1 - p2));
  // Round before ceil so that a result like 686.0000000001 from rounding error is not bumped to 687.
  return Math.ceil(Number(((root * root) / (p1 - p2) ** 2).toPrecision(12)));
}
