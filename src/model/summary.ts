/**
 * Report maths for one segment's posterior samples: the conversion rate σ(xᵀθ) of a combination
 * (posterior mean from the samples, equal-tailed 95% credible interval exact from the Gaussian
 * linear predictor, linearPredictor.ts), expected loss of
 * stopping on the leader E[max_c r(c) − r(leader)] (the "value remaining" criterion of
 * Scott, "Multi-armed bandit experiments in the online service economy", Applied Stochastic
 * Models in Business and Industry 31(1), 2015, §2.4) with its Monte-Carlo standard error
 * sd/√M (the central limit theorem for a sample mean), and factor effects.
 *
 * Factor effects: the headline figure is the average effect of averageEffects.ts. Beside it, and
 * named for what it is, the odds ratio exp(β_j) of each level against the factor's reference level
 * with the other factors at their first levels, with a 95% interval from the Gaussian posterior
 * marginal, exp(μ_j ± z₀.₉₇₅·sd_j). With interaction terms in the model that odds ratio is not an
 * average over the other factors.
 */
import type { Design } from "./design.ts";
import type { Gaussian } from "./hierarchy.ts";
import { inverseDiagonal } from "./linalg.ts";
import { sigmoid } from "./logistic.ts";
import { normalQuantile } from "./normalQuantile.ts";
import type { LinearPredictor } from "./linearPredictor.ts";
import type { AverageEffect, Estimate } from "./averageEffects.ts";
import type { MonteCarloError } from "./monteCarloError.ts";
import type { SettleStatus } from "./settleRule.ts";

export interface RateInterval {
  mean: number;
  lower: number;
  upper: number;
}
export interface CombinationSummary {
  combination: string;
  probabilityBest: number;
  /** Monte-Carlo error of probabilityBest (monteCarloError.ts). */
  probabilityBestError: MonteCarloError;
  rate: RateInterval;
}
export interface LevelEffect {
  level: string;
  /** Average change in conversion rate against the reference level (averageEffects.ts); null when never comparable. */
  difference: Estimate | null;
  /** Average relative change of the conversion rate; null when never comparable. */
  relative: Estimate | null;
  /** Contexts (other factors' levels) the average was taken over. */
  contexts: number;
  /** exp(β) of the level with the other factors at their first levels, 95% interval — not an average. */
  oddsRatioAtFirstLevels: { estimate: number; lower: number; upper: number };
}
export interface FactorEffect {
  factor: string;
  reference: string;
  levels: LevelEffect[];
}
export interface SegmentSummary extends SettleStatus {
  segment: string;
  leader: CombinationSummary;
  /** Best first (probability of being best, then posterior-mean rate), up to 10. */
  top: CombinationSummary[];
  expectedLoss: number;
  /** Monte-Carlo standard error of expectedLoss. */
  expectedLossError: number;
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

/** E[max_c r(c) − r(leader)] from each sample's best and the leader's linear predictors, with its Monte-Carlo standard error. */
export function expectedLoss(bestScores: Float64Array, leaderScores: Float64Array): { value: number; standardError: number } {
  const M = bestScores.length;
  let sum = 0;
  let squares = 0;
  for (let i = 0; i < M; i++) {
    const loss = Math.max(0, sigmoid(bestScores[i]) - sigmoid(leaderScores[i]));
    sum += loss;
    squares += loss * loss;
  }
  const value = sum / M;
  const variance = M > 1 ? Math.max(0, (squares - M * value * value) / (M - 1)) : 0;
  return { value, standardError: Math.sqrt(variance / M) };
}

/** Each factor's levels: the average effect (computed by averageEffects.ts) beside the odds ratio at first levels. */
export function factorEffects(design: Design, g: Gaussian, average: (AverageEffect | null)[][]): FactorEffect[] {
  const variance = inverseDiagonal(g.chol, design.dimension);
  return design.factors.map((factor, f) => ({
    factor: factor.name,
    reference: factor.levels[0],
    levels: factor.levels.slice(1).map((level, i) => {
      const j = design.mainIndex[f][i + 1];
      const sd = Math.sqrt(variance[j]);
      const a = average[f][i + 1];
      return {
        level,
        difference: a?.difference ?? null,
        relative: a?.relative ?? null,
        contexts: a?.contexts ?? 0,
        oddsRatioAtFirstLevels: { estimate: Math.exp(g.mean[j]), lower: Math.exp(g.mean[j] - Z975 * sd), upper: Math.exp(g.mean[j] + Z975 * sd) },
      };
    }),
  }));
}
