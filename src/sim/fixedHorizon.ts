/**
 * The classic fixed-horizon sample size a full-factorial split test would need (issue 4): per
 * segment, the per-arm n of a two-sided two-proportion test between the segment's best rate p and
 * p · (1 − mde), at α = 0.05 / (K − 1) (Bonferroni over the K − 1 comparisons with the best),
 * power 0.8; the segment needs K · n / share visitors; the page needs the maximum over segments.
 * The per-arm formula is Fleiss, Levin & Paik (2003) §4.2 via src/model's sampleSizeTwoProportions.
 */
import { fail } from "../errors.ts";
import { sampleSizeTwoProportions } from "../model/index.ts";

export interface FixedHorizon {
  visitors: number;
  method: string;
}

export function fixedHorizon(bestRates: number[], shares: number[], combinationCount: number, mde: number): FixedHorizon {
  if (combinationCount < 2) {
    throw fail("INVALID_SCENARIO", { path: "factors", reason: "a test needs at least two allowed combinations" }, "scenario");
  }
  let visitors = 0;
  bestRates.forEach((best, s) => {
    const perArm = sampleSizeTwoProportions({ p1: best, p2: best * (1 - mde), alpha: 0.05, power: 0.8, comparisons: combinationCount - 1 });
    visitors = Math.max(visitors, Math.ceil((combinationCount * perArm) / shares[s]!));
  });
  return {
    visitors,
    method:
      `two-sided two-proportion test (Fleiss, Levin & Paik 2003, §4.2), best rate vs best × (1 − ${mde}), ` +
      `α = 0.05 / ${combinationCount - 1} (Bonferroni), power 0.8, per segment ${combinationCount} arms ÷ share; maximum over segments`,
  };
}
