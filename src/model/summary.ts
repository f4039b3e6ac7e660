/**
 * Report maths for one segment's posterior samples: the conversion rate σ(xᵀθ) of a combination
 * (posterior mean from the samples, equal-tailed 95% credible interval exact from the Gaussian
 * linear predictor, linearPredictor.ts), expected loss of
 * stopping on the leader E[max_c r(c) − r(leader)] (the "value remaining" criterion of
 * Scott, "Multi-armed bandit experiments in the online service economy", Applied Stochastic
 * Models in Business and Industry 31(1), 2015, §2.4), the settle rule of DESIGN.md, and factor
 * effects.
 *
 * Factor effects are odds ratios exp(β_j) of each level against the factor's reference (first)
 * level with a 95% interval from the Gaussian posterior marginal, exp(μ_j ± z₀.₉₇₅·sd_j). With
 * interaction terms in the model this is the effect at the other factors' reference levels,
 * not an average over them.
 */
import type { Design } from "./design.ts";
import type { Gaussian } from "./hierarchy.ts";
import { inverseDiagonal } from "./linalg.ts";
import { sigmoid } from "./logistic.ts";
import { normalQuantile } from "./normalQuantile.ts";
import type { LinearPredictor } from "./linearPredictor.ts";
import type { PageSettings } from "./settings.ts";

export interface RateInterval {
  mean: number;
  lower: number;
  upper: number;
}
export interface CombinationSummary {
  combination: string;
  probabilityBest: number;
  rate: RateInterval;
}
export interface FactorEffect {
  factor: string;
  reference: string;
  levels: { level: string; oddsRatio: number; lower: number; upper: number }[];
}
export interface SegmentSummary {
  segment: string;
  status: "exploring" | "settled";
  settledBy: "probability" | "loss" | null;
  leader: CombinationSummary;
  /** Best first (probability of being best, then posterior-mean rate), up to 10. */
  top: CombinationSummary[];
  expectedLoss: number;
  expectedLossFraction: number;
  baseline: CombinationSummary;
  effects: FactorEffect[];
  /** τ, the sd of a segment's effects around the pooled ones, as learned at this fold (log-odds). */
  segmentSpread: number;
}

const Z975 = normalQuantile(0.975);

/** Equal-tailed 95% credible bounds of the rate σ(a), exact from the linear predictor's Gaussian posterior. */
export function rateBounds(predictor: LinearPredictor): { lower: number; upper: number } {
  return { lower: sigmoid(predictor.mean - Z975 * predictor.sd), upper: sigmoid(predictor.mean + Z975 * predictor.sd) };
}

/**
 * Posterior mean of the rate σ(a) over the samples' linear predictors (E[σ(a)] has no closed form)
 * and its exact 95% interval.
 */
export function rateFromScores(scores: Float64Array, predictor: LinearPredictor): RateInterval {
  let sum = 0;
  for (let i = 0; i < scores.length; i++) sum += sigmoid(scores[i]);
  return { mean: sum / scores.length, ...rateBounds(predictor) };
}

/** E[max_c r(c) − r(leader)] from each sample's best and the leader's linear predictors. */
export function expectedLoss(bestScores: Float64Array, leaderScores: Float64Array): number {
  let sum = 0;
  for (let i = 0; i < bestScores.length; i++) sum += Math.max(0, sigmoid(bestScores[i]) - sigmoid(leaderScores[i]));
  return sum / bestScores.length;
}

/** DESIGN.md "Settled": the leader's probability of being best, else the expected-loss fraction. */
export function settledStatus(leaderProbability: number, lossFraction: number, settings: PageSettings): Pick<SegmentSummary, "status" | "settledBy"> {
  if (leaderProbability >= settings.settleProbability) return { status: "settled", settledBy: "probability" };
  if (lossFraction <= settings.settleLossFraction) return { status: "settled", settledBy: "loss" };
  return { status: "exploring", settledBy: null };
}

export function factorEffects(design: Design, g: Gaussian): FactorEffect[] {
  const variance = inverseDiagonal(g.chol, design.dimension);
  return design.factors.map((factor, f) => ({
    factor: factor.name,
    reference: factor.levels[0],
    levels: factor.levels.slice(1).map((level, i) => {
      const j = design.mainIndex[f][i + 1];
      const sd = Math.sqrt(variance[j]);
      return { level, oddsRatio: Math.exp(g.mean[j]), lower: Math.exp(g.mean[j] - Z975 * sd), upper: Math.exp(g.mean[j] + Z975 * sd) };
    }),
  }));
}
