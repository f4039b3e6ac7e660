/**
 * Retirement (DESIGN.md "Retired"): a combination is retired from a segment when, for
 * retireAfterFolds consecutive folds, its probability of being best is below retireProbability
 * AND its upper 95% credible bound on the conversion rate is below the leader's lower bound.
 * A retired combination is no longer served, but it is still scored every fold; when the rule no
 * longer holds (typically after forgetting widened the posterior) it is reinstated and the
 * reinstatement is recorded with its reason. "No longer holds" must mean neither Monte-Carlo
 * noise nor a passing change of leader (DESIGN.md, round 2: decisions must not flip):
 * - the probability part counts only when the number of samples in which the combination is best
 *   would be unlikely (< 1%) under Binomial(M, retireProbability) — the upper tail of the binomial
 *   count of the sampler itself (with M samples a probability of 0.001 is one lucky sample);
 * - the bound part must fail for retireAfterFolds consecutive folds, as it had to hold for as many
 *   to retire. Near-tied leaders take turns from fold to fold, and each has its own lower bound:
 *   without this, one simulated run of the large-space scenario reinstated 2,250 combinations by
 *   their bound (hundreds at each change of leader) and retired most of them again a fold later.
 * The rule is common practice for pruning arms in Bayesian adaptive designs (no single source);
 * the thresholds are page settings.
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
  /**
   * By key (entries > 0 only): for a combination in service, the consecutive folds it has met the
   * rule; for a retired one, the consecutive folds its upper bound has not been below the leader's.
   */
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

/** Smallest count x with P(X ≥ x) < 1% for X ~ Binomial(M, p): a count this high is not sampling noise. */
export function significantCount(samples: number, p: number): number {
  if (p <= 0) return 1;
  // pmf(0) in logs, then pmf(x+1) = pmf(x)·(M−x)/(x+1)·p/(1−p); tail = 1 − cdf.
  let pmf = Math.exp(samples * Math.log1p(-p));
  let cdf = 0;
  for (let x = 0; x <= samples; x++) {
    if (1 - cdf < 0.01) return x;
    cdf += pmf;
    pmf *= ((samples - x) / (x + 1)) * (p / (1 - p));
  }
  return samples + 1;
}

export function updateRetirement(input: RetirementInput): RetirementUpdate {
  const { settings, keys } = input;
  const risen = significantCount(settings.samples, settings.retireProbability) / settings.samples;
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
      const above = upper >= input.leaderLower ? (input.counters.get(key) ?? 0) + 1 : 0;
      if (p >= risen) {
        reinstated.set(key, `probability of being best rose to ${p.toPrecision(3)} (above ${settings.retireProbability} beyond sampling noise)`);
      } else if (above >= settings.retireAfterFolds) {
        reinstated.set(key, `upper bound ${upper.toPrecision(3)} has not been below the leader's lower bound (now ${input.leaderLower.toPrecision(3)}) for ${above} folds`);
      } else if (above > 0) {
        counters.set(key, above);
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
