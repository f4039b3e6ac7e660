/**
 * Exponential forgetting: before a fold every segment's counts are multiplied by
 * w = 2^(−Δt / half-life) (counts.ts), so data older than a half-life count half. Raising the
 * likelihood to the power w is the power-prior / exponential-weighting scheme (Ibrahim & Chen,
 * "Power prior distributions for regression models", Statistical Science 15(1), 2000; Kulhavý &
 * Zarrop, "On a general concept of forgetting", Int. J. Control 58(4), 1993). Only data decay —
 * the prior is not in the counts.
 */

const DAY_MS = 86_400_000;

/** The weight 2^(−Δt/half-life); 1 when forgetting is off or time did not advance. */
export function forgettingWeight(lastFoldAt: number | null, now: number, halfLifeDays: number | null): number {
  if (halfLifeDays === null || lastFoldAt === null || !(now > lastFoldAt)) return 1;
  return Math.pow(2, -(now - lastFoldAt) / (halfLifeDays * DAY_MS));
}

