import { requireTrials } from "./argumentGuards.ts";
import { fisherExact, type FisherExactResult } from "./fisherExact.ts";
import { liftInterval, type LiftInterval } from "./liftInterval.ts";
import { twoProportionZTest, type ZTestResult } from "./twoProportionZTest.ts";

export interface Arm {
  visitors: number;
  conversions: number;
}

export interface CrossCheck {
  /** Pooled two-proportion z-test, two-sided; z > 0 when the leader converts better. */
  zTest: ZTestResult;
  /** Fisher's exact test on [[leader conv, leader non-conv], [baseline conv, baseline non-conv]]. */
  fisher: FisherExactResult;
  /** Leader minus baseline (absolute) and leader / baseline − 1 (relative), 95% intervals. */
  lift: LiftInterval;
  /** Why these figures must not be read as a clean experiment's result. */
  warning: string;
}

/** Shown with every cross-check: the figures assume fixed, independent samples, which adaptive allocation breaks. */
export const ADAPTIVE_ALLOCATION_WARNING =
  "These are naive fixed-sample tests, shown only as a cross-check. They assume both combinations got " +
  "a fixed, pre-planned share of traffic. Here the leader was picked because it looked best, and the " +
  "engine kept moving traffic toward it for that reason, so its observed rate can flatter it and the " +
  "p-values and intervals do not carry their stated error rates. Use the Bayesian figures for " +
  "decisions; to confirm a result the classic way, run a fresh fixed-split test sized in advance.";

/**
 * The frequentist cross-check of a segment's leader against the baseline combination: the
 * two-proportion z-test, Fisher's exact test, and the absolute and relative lift with 95%
 * intervals (methods and sources in twoProportionZTest.ts, fisherExact.ts and liftInterval.ts).
 *
 * The caution is not optional. Choosing the leader as the best-looking arm flatters it (the
 * winner's curse), while adaptive sampling itself biases each arm's sample mean — downward for
 * optimistic policies (X. Nie, X. Tian, J. Taylor & J. Zou (2018), "Why adaptively collected data
 * have negative bias and how to correct for it", AISTATS; J. Shin, A. Ramdas & A. Rinaldo (2019),
 * "Are sample means in multi-armed bandits positively or negatively biased?", NeurIPS). Either
 * way the fixed-sample error rates of these tests do not hold.
 *
 * Zero conversions in either arm give finite figures (see the components). Throws
 * INVALID_ARGUMENT when either arm has no visitors — callers skip the cross-check then.
 */
export function crossCheck(leader: Arm, baseline: Arm): CrossCheck {
  requireTrials("leader.conversions", leader.conversions, "leader.visitors", leader.visitors);
  requireTrials("baseline.conversions", baseline.conversions, "baseline.visitors", baseline.visitors);
  const x1 = leader.conversions;
  const n1 = leader.visitors;
  const x2 = baseline.conversions;
  const n2 = baseline.visitors;
  return {
    zTest: twoProportionZTest(x1, n1, x2, n2),
    fisher: fisherExact(x1, n1 - x1, x2, n2 - x2),
    lift: liftInterval(x1, n1, x2, n2, 0.95),
    warning: ADAPTIVE_ALLOCATION_WARNING,
  };
}
