/**
 * The Monte-Carlo error of a probability estimated as the share p̂ = x/M of M independent
 * posterior draws (the probability of being best): x ~ Binomial(M, p), so the standard error is
 * √(p̂(1 − p̂)/M). At x = 0 or x = M that formula says 0, which is not the truth, so the error
 * also carries the 95% Wilson score interval (Wilson, "Probable inference, the law of succession,
 * and statistical inference", JASA 22(158), 1927, pp. 209–212):
 *   centre = (p̂ + z²/2M) / (1 + z²/M),  half width = z/(1 + z²/M) · √(p̂(1 − p̂)/M + z²/4M²).
 * At x = 0 its upper bound is z²/(M + z²) ≈ 3.84/M, the same order as the rule of three's one-sided
 * 3/M (Hanley & Lippman-Hand, "If nothing goes wrong, is everything all right?", JAMA 249(13), 1983).
 */
import { normalQuantile } from "./normalQuantile.ts";

export interface MonteCarloError {
  /** Posterior draws the share was counted over. */
  draws: number;
  /** Binomial standard error √(p̂(1 − p̂)/M). */
  standardError: number;
  /** 95% Wilson score interval of the share's Monte-Carlo error. */
  lower: number;
  upper: number;
}

const Z = normalQuantile(0.975);

export function monteCarloError(share: number, draws: number): MonteCarloError {
  const p = Math.min(1, Math.max(0, share));
  const z2 = Z * Z;
  const denominator = 1 + z2 / draws;
  const centre = (p + z2 / (2 * draws)) / denominator;
  const half = (Z / denominator) * Math.sqrt((p * (1 - p)) / draws + z2 / (4 * draws * draws));
  return {
    draws,
    standardError: Math.sqrt((p * (1 - p)) / draws),
    lower: p === 0 ? 0 : Math.max(0, centre - half),
    upper: p === 1 ? 1 : Math.min(1, centre + half),
  };
}
