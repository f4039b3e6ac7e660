/**
 * The leader's figures (probability of being best, expected loss) from posterior draws independent
 * of the draws that chose the leader, and more of them when a figure is near a settle bar.
 *
 * Choosing the leader as the combination that won most of M draws and reading its probability
 * of being best off the same draws overstates it — the winner's curse, or selection bias of the
 * maximum (Thaler, "Anomalies: The Winner's Curse", J. Economic Perspectives 2(1), 1988; for
 * estimates chosen by rank, Efron, "Tweedie's formula and selection bias", JASA 106, 2011):
 * at an exact tie of two combinations the count of the more frequent is E[max(X, M − X)]/M =
 * ½ + E|X − M/2|/M ≈ ½ + 0.4/√M, 0.513 at M = 1,000. Estimating the chosen combination's figure
 * on fresh draws removes that bias (sample splitting; the chosen index is fixed before the new
 * draws are made, so its count on them is Binomial(R, p) exactly).
 *
 * Fresh draws cost a second scan, so they are made only when they change something:
 *   - a settle figure is within NEAR_BAR_SE standard errors of its bar (settleRule.ts) →
 *     R = REFINE_FACTOR·M (capped at REFINE_MAX_DRAWS, never below M), and every reported
 *     probability and the loss come from them: √8 ≈ 2.8 times less Monte-Carlo error exactly where
 *     the decision is made;
 *   - else, the ranking is uncertain: the leader's count leads the runner-up's by less than
 *     NEAR_BAR_SE standard errors of the difference of two multinomial counts,
 *     √(x₁ + x₂ − (x₁ − x₂)²/M) (otherwise the bias is negligible: the choice would not change on
 *     other draws) → R = M/4 (at least 100), for the leader's figures only (its probability and the
 *     loss of stopping on it). Early in a test nearly every segment is here, so this costs a quarter
 *     scan, not a whole one; the leader's figure then carries the larger error of R draws, stated.
 * A clear leader far from both bars keeps the allocation's draws: the normal path costs nothing more.
 */
import { comboTable, scanByClimbing, scanEnumerated } from "./bestCombination.ts";
import type { Design } from "./design.ts";
import type { Gaussian } from "./hierarchy.ts";
import type { Rng } from "./rng.ts";
import { drawSamples } from "./sampling.ts";
import { NEAR_BAR_SE } from "./settleRule.ts";

export const REFINE_FACTOR = 8;
export const REFINE_MAX_DRAWS = 32_000;
/** Fresh draws for an uncertain ranking, as a share of M (at least RANKING_MIN_DRAWS). */
export const RANKING_SHARE = 0.25;
export const RANKING_MIN_DRAWS = 100;

export interface RefinementInput {
  /** Draws the leader was chosen on. */
  samples: number;
  leaderProbability: number;
  runnerUpProbability: number;
  /** A settle figure is near its bar (settleRule.ts nearBar). */
  nearBar: boolean;
}

export interface Refinement {
  /** Fresh draws to make (0: none). */
  draws: number;
  /** Every reported figure from them (near a bar), or only the leader's (uncertain ranking). */
  scope: "all" | "leader";
}

/** The fresh draws the figures need (see the file comment). */
export function refinementDraws(input: RefinementInput): Refinement {
  const M = input.samples;
  if (input.nearBar) return { draws: Math.max(M, Math.min(REFINE_FACTOR * M, REFINE_MAX_DRAWS)), scope: "all" };
  const x1 = input.leaderProbability * M;
  const x2 = input.runnerUpProbability * M;
  const sd = Math.sqrt(Math.max(0, x1 + x2 - ((x1 - x2) * (x1 - x2)) / M));
  const uncertain = x1 - x2 < NEAR_BAR_SE * sd;
  return { draws: uncertain ? Math.max(RANKING_MIN_DRAWS, Math.ceil(RANKING_SHARE * M)) : 0, scope: "leader" };
}

export interface FreshFigures {
  /** The fresh draws (feature-major, sampling.ts). */
  samples: Float64Array;
  count: number;
  /** Share of the fresh draws each listed key wins (0 for keys no fresh draw chose). */
  probabilityBest: Float64Array;
  /** Each fresh draw's best linear predictor among all allowed combinations. */
  bestScore: Float64Array;
}

/** Every listed combination's probability of being best on `count` fresh draws of the posterior. */
export function freshFigures(design: Design, posterior: Gaussian, keys: string[], count: number, meanTheta: Float64Array, rng: Rng): FreshFigures {
  const samples = drawSamples(posterior, design.dimension, count, rng);
  if (design.enumerable) {
    const table = comboTable(design);
    // No combination eligible: the tempered (allocation) half of the scan is skipped.
    const scan = scanEnumerated(table, samples, count, new Uint8Array(table.keys.length));
    const probabilityBest = Float64Array.from(keys, (key) => scan.countAll[table.indexOfKey.get(key)!] / count);
    return { samples, count, probabilityBest, bestScore: scan.bestScore };
  }
  const scan = scanByClimbing(design, samples, count, meanTheta, rng);
  const wins = new Map(scan.winners.map((w) => [w.key, w.count]));
  return { samples, count, probabilityBest: Float64Array.from(keys, (key) => (wins.get(key) ?? 0) / count), bestScore: scan.bestScore };
}
