/**
 * The settle rule (DESIGN.md "Settled") with hysteresis, and when its figures are too close to a
 * bar to decide on the draws at hand.
 *
 * A segment settles when the leader's probability of being best reaches settleProbability or the
 * expected loss of stopping on it falls to settleLossFraction of its rate; a settled segment stays
 * settled until the probability falls below unsettleProbability AND the loss rises above
 * unsettleLossFraction. The band between the two bars is a Schmitt trigger (hysteresis, common
 * engineering practice, no source): a figure wandering around one bar by Monte-Carlo noise or a
 * fold's small posterior move cannot make the status flip back and forth. An unsettle bar on the
 * wrong side of its settle bar acts as the settle bar (no band), so a page that lowers
 * settleProbability below the default unsettle bar keeps working.
 *
 * "Too close": a figure within NEAR_BAR_SE Monte-Carlo standard errors of the bar that applies
 * (three standard errors: a normal figure lands beyond them by noise alone 0.3% of the time; the
 * "3 sigma" convention, common practice, no source). allocateSegment.ts then draws more.
 */
import type { PageSettings } from "./settings.ts";

export type SettleStatus = { status: "exploring" | "settled"; settledBy: "probability" | "loss" | null };

/** Standard errors within which a figure counts as near its bar. */
export const NEAR_BAR_SE = 3;

export interface SettleBars {
  probability: number;
  lossFraction: number;
}

/** The bars that apply: the settle bars for an exploring segment, the (laxer) unsettle bars for a settled one. */
export function settleBars(settings: PageSettings, wasSettled: boolean): SettleBars {
  if (!wasSettled) return { probability: settings.settleProbability, lossFraction: settings.settleLossFraction };
  return {
    probability: Math.min(settings.unsettleProbability, settings.settleProbability),
    lossFraction: Math.max(settings.unsettleLossFraction, settings.settleLossFraction),
  };
}

export function settledStatus(leaderProbability: number, lossFraction: number, bars: SettleBars): SettleStatus {
  if (leaderProbability >= bars.probability) return { status: "settled", settledBy: "probability" };
  if (lossFraction <= bars.lossFraction) return { status: "settled", settledBy: "loss" };
  return { status: "exploring", settledBy: null };
}

export interface SettleFigures {
  leaderProbability: number;
  /** The share's binomial standard error at the bar, √(bar(1 − bar)/M): a z-test of "the figure is the bar". */
  leaderProbabilityError: number;
  lossFraction: number;
  lossFractionError: number;
}

/** True when either figure is within NEAR_BAR_SE of its standard errors of the bar that applies. */
export function nearBar(f: SettleFigures, bars: SettleBars): boolean {
  const near = (value: number, error: number, bar: number) => Number.isFinite(value) && Math.abs(value - bar) <= NEAR_BAR_SE * error;
  return near(f.leaderProbability, f.leaderProbabilityError, bars.probability) || near(f.lossFraction, f.lossFractionError, bars.lossFraction);
}
