/**
 * What a level does, as a marketer means it: the change in conversion rate from switching one
 * factor from its reference (first) level to this level, averaged over the other factors' levels
 * and over the posterior. For factor f, level l and a posterior draw θ:
 *   Δ(θ) = mean over contexts c₋f of [σ(x(c₋f, l)ᵀθ) − σ(x(c₋f, ref)ᵀθ)]              (points)
 *   ρ(θ) = Σ σ(x(c₋f, l)ᵀθ) / Σ σ(x(c₋f, ref)ᵀθ) − 1                                  (relative)
 * The contexts are the other factors' level combinations under which both (c₋f, l) and
 * (c₋f, ref) are allowed (exclusion rules respected), weighted uniformly: every context when there
 * are at most CONTEXT_LIMIT of them, else CONTEXT_LIMIT drawn uniformly (with replacement) and
 * kept only when both are allowed. The estimate is the mean of Δ over the draws (the first
 * EFFECT_DRAW_LIMIT), the 95% interval the draws' 2.5% and 97.5% quantiles (equal-tailed credible
 * interval).
 *
 * This is the average marginal effect of a categorical predictor — the "average predictive
 * comparison" of Gelman & Pardoe, "Average predictive comparisons for models with nonlinearity,
 * interactions, and variance components", Sociological Methodology 37, 2007, with the other
 * inputs averaged uniformly over the design instead of over observed data (cited from memory).
 * Unlike an odds ratio at the other factors' reference levels it includes every interaction the
 * level takes part in: a level that is great with one hero image and neutral otherwise shows a
 * positive average.
 */
import { addRows } from "./addRows.ts";
import { matchesNoRule } from "./allowed.ts";
import { type Design, slotsInvolving, writeActiveFeatures } from "./design.ts";
import { quantileInPlace } from "./quantile.ts";
import type { Rng } from "./rng.ts";

/** Above this many contexts per factor, the average is taken over this many drawn at random. */
export const CONTEXT_LIMIT = 32;
/**
 * At most this many of the draws are used: each context costs a rate (an exp) per draw, and the
 * effects of every segment are computed at every fold. 500 draws put 12 in each 2.5% tail; the
 * interval's ends then vary between folds by about 0.12 posterior sd (√(q(1−q)/n)/φ(z_q), the
 * sample quantile's standard error, for a normal posterior).
 */
export const EFFECT_DRAW_LIMIT = 500;

export interface Estimate {
  mean: number;
  lower: number;
  upper: number;
}

export interface AverageEffect {
  /** Change in conversion rate (a difference of rates; ×100 for percentage points). */
  difference: Estimate;
  /** Relative change of the average rate over the same contexts (0.12 = 12% more conversions). */
  relative: Estimate;
  /** Contexts the average was taken over. */
  contexts: number;
}

function estimate(values: Float64Array): Estimate {
  let sum = 0;
  for (let i = 0; i < values.length; i++) sum += values[i];
  const mean = sum / values.length;
  return { mean, lower: quantileInPlace(values, 0.025), upper: quantileInPlace(values, 0.975) };
}

/**
 * Per factor, per level: the average effect against the reference level (index 0 holds null, as
 * does a level that is never allowed together with a context of the reference level).
 * `samples` are feature-major draws (sampling.ts) of `draws` draws; the first EFFECT_DRAW_LIMIT are used.
 */
export function averageEffects(design: Design, samples: Float64Array, draws: number, rng: Rng): (AverageEffect | null)[][] {
  const F = design.factors.length;
  const count = Math.min(draws, EFFECT_DRAW_LIMIT);
  const active = new Int32Array(design.activeCount);
  const base = new Float64Array(count);
  const score = new Float64Array(count);
  const refRate = new Float64Array(count);
  const rows = new Int32Array(design.activeCount);
  // Adds the draws' rows of the active slots with involves[k] === want (zero slots add nothing).
  const addSlots = (involves: Uint8Array, want: number, out: Float64Array) => {
    let m = 0;
    for (let k = 0; k < active.length; k++) if (involves[k] === want && active[k] !== design.dimension) rows[m++] = active[k];
    addRows(rows, 0, m, samples, draws, count, out);
  };
  return design.factors.map((_, f) => {
    const L = design.sizes[f];
    const involves = slotsInvolving(design, f);
    const others = design.sizes.map((size, g) => (g === f ? 1 : size));
    const contextCount = others.reduce((a, b) => a * b, 1);
    const exhaustive = contextCount <= CONTEXT_LIMIT;
    const rounds = exhaustive ? contextCount : CONTEXT_LIMIT;
    const levelSum = Array.from({ length: L }, () => new Float64Array(count));
    const refSum = Array.from({ length: L }, () => new Float64Array(count));
    const used = new Array<number>(L).fill(0);
    const c = new Array<number>(F).fill(0);
    for (let r = 0; r < rounds; r++) {
      // Context r in mixed radix over the other factors, or one drawn uniformly.
      let rest = r;
      for (let g = 0; g < F; g++) {
        if (g === f) continue;
        if (exhaustive) {
          c[g] = rest % others[g];
          rest = Math.floor(rest / others[g]);
        } else {
          c[g] = rng.int(others[g]);
        }
      }
      c[f] = 0;
      if (!matchesNoRule(design, c)) continue;
      // The context's share of every level's linear predictor (the slots not involving f), summed
      // once; at the reference level it is the whole predictor (slotsInvolving).
      writeActiveFeatures(design, c, active, 0);
      base.fill(0);
      addSlots(involves, 0, base);
      // σ inline (1/(1 + e^−x) is exact at both ends: e^−x → ∞ gives 0, → 0 gives 1): the hottest loops here.
      for (let s = 0; s < count; s++) refRate[s] = 1 / (1 + Math.exp(-base[s]));
      for (let l = 1; l < L; l++) {
        c[f] = l;
        if (!matchesNoRule(design, c)) continue;
        writeActiveFeatures(design, c, active, 0);
        score.set(base);
        addSlots(involves, 1, score);
        const ls = levelSum[l];
        const rs = refSum[l];
        for (let s = 0; s < count; s++) {
          ls[s] += 1 / (1 + Math.exp(-score[s]));
          rs[s] += refRate[s];
        }
        used[l]++;
      }
      c[f] = 0;
    }
    return Array.from({ length: L }, (_, l) => {
      if (l === 0 || used[l] === 0) return null;
      // Δ = (Σ rate at l − Σ rate at ref) / contexts and ρ = Σ rate at l / Σ rate at ref − 1, per draw.
      const difference = new Float64Array(count);
      const relative = new Float64Array(count);
      for (let s = 0; s < count; s++) {
        difference[s] = (levelSum[l][s] - refSum[l][s]) / used[l];
        relative[s] = levelSum[l][s] / refSum[l][s] - 1;
      }
      return { difference: estimate(difference), relative: estimate(relative), contexts: used[l] };
    });
  });
}
