/**
 * Exponential forgetting: before a fold every site's data information (Λ_s, η_s and the
 * effective counts) is multiplied by w = 2^(−Δt / half-life), so information older than a
 * half-life counts half. Scaling a Gaussian likelihood's natural parameters by w is the
 * power-prior / exponential-weighting scheme (Ibrahim & Chen, "Power prior distributions for
 * regression models", Statistical Science 15(1), 2000; Kulhavý & Zarrop, "On a general concept
 * of forgetting", Int. J. Control 58(4), 1993). Only data decays — the prior is not in the sites.
 */
import type { ModelState } from "./state.ts";

const DAY_MS = 86_400_000;

/** The weight 2^(−Δt/half-life); 1 when forgetting is off or time did not advance. */
export function forgettingWeight(lastFoldAt: number | null, now: number, halfLifeDays: number | null): number {
  if (halfLifeDays === null || lastFoldAt === null || !(now > lastFoldAt)) return 1;
  return Math.pow(2, -(now - lastFoldAt) / (halfLifeDays * DAY_MS));
}

/** A copy of the state with every site scaled by w. */
export function forget(state: ModelState, w: number): ModelState {
  if (w === 1) return state;
  const sites = new Map();
  for (const [segment, site] of state.sites) {
    sites.set(segment, {
      lambda: site.lambda.map((x) => x * w),
      eta: site.eta.map((x) => x * w),
      visitors: site.visitors * w,
      conversions: site.conversions * w,
      folds: site.folds,
    });
  }
  return { ...state, sites };
}
