/**
 * Retirement (DESIGN.md "Retired"): a combination is retired from a segment when, for
 * retireAfterFolds consecutive folds, its probability of being best is below retireProbability
 * AND its upper 95% credible bound on the conversion rate is below the leader's lower bound.
 * A retired combination is no longer served, but it is still scored every fold; as soon as the
 * rule no longer holds (typically after forgetting widened the posterior) it is reinstated and the
 * reinstatement is recorded with its reason. The rule is common practice for pruning arms in
 * Bayesian adaptive designs (no single source); the thresholds are page settings.
 */
import type { PageSettings } from "./settings.ts";

export interface RetiredEntry {
  segment: string;
  combination: string;
  reason: "dominated" | string;
  figures: { probabilityBest: number; upper: number; leader: string; leaderLower: number; folds: number };
  retiredAt: number;
  reinstatedAt: number | null;
  reinstateReason?: string;
}

export interface RetirementInput {
  segment: string;
  keys: string[];
  probabilityBest: ArrayLike<number>;
  /** Upper 95% bound of each combination's conversion rate. */
  upper: ArrayLike<number>;
  leader: number;
  leaderLower: number;
  /** Consecutive dominated folds so far, by key (entries > 0 only). */
  counters: Map<string, number>;
  /** Currently retired combinations of this segment, by key. */
  active: Map<string, RetiredEntry>;
  settings: PageSettings;
  now: number;
}

export interface RetirementUpdate {
  counters: Map<string, number>;
  retired: RetiredEntry[];
  reinstated: Map<string, string>;
}

export function updateRetirement(input: RetirementInput): RetirementUpdate {
  const { settings, keys } = input;
  const counters = new Map<string, number>();
  const retired: RetiredEntry[] = [];
  const reinstated = new Map<string, string>();
  const leaderKey = keys[input.leader];
  for (let i = 0; i < keys.length; i++) {
    const key = keys[i];
    const p = input.probabilityBest[i];
    const upper = input.upper[i];
    const dominated = i !== input.leader && p < settings.retireProbability && upper < input.leaderLower;
    if (input.active.has(key)) {
      if (!dominated) {
        reinstated.set(key, p >= settings.retireProbability
          ? `probability of being best rose to ${p.toPrecision(3)} (≥ ${settings.retireProbability})`
          : `upper bound ${upper.toPrecision(3)} is no longer below the leader's lower bound ${input.leaderLower.toPrecision(3)}`);
      }
      continue;
    }
    if (!dominated) continue;
    const folds = (input.counters.get(key) ?? 0) + 1;
    if (folds >= settings.retireAfterFolds) {
      retired.push({
        segment: input.segment,
        combination: key,
        reason: "dominated",
        figures: { probabilityBest: p, upper, leader: leaderKey, leaderLower: input.leaderLower, folds },
        retiredAt: input.now,
        reinstatedAt: null,
      });
    } else {
      counters.set(key, folds);
    }
  }
  return { counters, retired, reinstated };
}
