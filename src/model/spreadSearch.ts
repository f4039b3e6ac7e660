/**
 * Type-II maximum a posteriori choice of the segment spread τ on a grid (empirical Bayes, DESIGN.md
 * "Priors": learning the scales from the data is welcome). The grid is τ = segmentSpread · 2^(k/2)
 * for k = −4 … 4 (a quarter to four times the setting); the hyperprior on log τ is normal around
 * the setting with sd ln 2, so the data must earn every step away from it. The score of a grid point
 * is the log marginal likelihood of all sites under that τ (hierarchy.ts, `logEvidence`) plus the
 * log hyperprior. Marginal likelihood for the hyperparameters of a hierarchical normal model:
 * Gelman et al., Bayesian Data Analysis, 3rd ed. 2013, §5.4, eq. 5.21 (p(τ | y)); choosing its
 * maximum is type-II maximum likelihood (Berger, Statistical Decision Theory and Bayesian
 * Analysis, 2nd ed. 1985, §4.5) — here with the hyperprior added, so a MAP.
 *
 * The search walks from the step the previous fold chose (k = 0 at first) towards the better
 * neighbour until neither improves: usually three evaluations, each one pass of the hierarchy. The
 * score is unimodal in log τ in every case we ran; where it is not, the walk still returns a local
 * maximum no worse than its start.
 */

export const SPREAD_STEPS = 4;
/** sd of log τ around the setting (common practice, no source: a factor of 2 is one sd). */
const HYPERPRIOR_SD = Math.LN2;

/** τ's multiple of the setting at grid step k. */
export function spreadFactor(k: number): number {
  return Math.pow(2, k / 2);
}

/** Log hyperprior of grid step k (up to a constant). */
export function logHyperprior(k: number): number {
  const z = Math.log(spreadFactor(k)) / HYPERPRIOR_SD;
  return -0.5 * z * z;
}

/** The grid step nearest τ (0 for null or a zero setting), within the grid. */
export function nearestStep(tau: number | null, setting: number): number {
  if (tau === null || !(tau > 0) || !(setting > 0)) return 0;
  const k = Math.round(2 * Math.log2(tau / setting));
  return Math.max(-SPREAD_STEPS, Math.min(SPREAD_STEPS, k));
}

/**
 * The grid step with the highest `logEvidence(k) + logHyperprior(k)`, found by walking from
 * `start`, and what `evaluate` returned for it. `evaluate` is called at most once per step.
 */
export function searchSpread<T extends { logEvidence: number }>(evaluate: (k: number) => T, start = 0): { step: number; value: T } {
  const seen = new Map<number, T>();
  const score = (k: number): number => {
    let v = seen.get(k);
    if (!v) seen.set(k, (v = evaluate(k)));
    return v.logEvidence + logHyperprior(k);
  };
  let k = start;
  let here = score(k);
  const up = k < SPREAD_STEPS ? score(k + 1) : -Infinity;
  const down = k > -SPREAD_STEPS ? score(k - 1) : -Infinity;
  const direction = up > here && up >= down ? 1 : down > here ? -1 : 0;
  if (direction !== 0) {
    k += direction;
    here = direction === 1 ? up : down;
    while (Math.abs(k + direction) <= SPREAD_STEPS) {
      const next = score(k + direction);
      if (!(next > here)) break;
      k += direction;
      here = next;
    }
  }
  return { step: k, value: seen.get(k)! };
}

/** Share of the largest weight below which a grid step is left out of τ's posterior (its mass is negligible). */
const NEGLIGIBLE = 1e-3;

/**
 * τ's posterior on the grid, p(k | sites) ∝ exp(logEvidence(k) + logHyperprior(k)) (BDA §5.4,
 * eq. 5.21 read on a grid), over the steps that carry weight: from `start` outwards in both
 * directions until a step's weight falls below NEGLIGIBLE of the largest seen. Weights sum to 1.
 */
export function spreadPosterior<T extends { logEvidence: number }>(start: number, evaluate: (k: number) => T): { step: number; weight: number; value: T }[] {
  const seen: { step: number; score: number; value: T }[] = [];
  const add = (k: number) => {
    const value = evaluate(k);
    const entry = { step: k, score: value.logEvidence + logHyperprior(k), value };
    seen.push(entry);
    return entry.score;
  };
  let best = add(start);
  for (const direction of [1, -1]) {
    for (let k = start + direction; Math.abs(k) <= SPREAD_STEPS; k += direction) {
      const score = add(k);
      best = Math.max(best, score);
      if (score < best + Math.log(NEGLIGIBLE)) break;
    }
  }
  const kept = seen.filter((e) => e.score >= best + Math.log(NEGLIGIBLE));
  const total = kept.reduce((sum, e) => sum + Math.exp(e.score - best), 0);
  return kept.sort((a, b) => a.step - b.step).map((e) => ({ step: e.step, weight: Math.exp(e.score - best) / total, value: e.value }));
}
