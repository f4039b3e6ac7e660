/**
 * Type-II maximum a posteriori choice of the prior scales of the pooled effects (empirical Bayes,
 * DESIGN.md "Priors": learning the scales from the data is welcome). The settings'
 * priorMainScale and priorInteractionScale encode realistic effect sizes (common practice, no
 * source); pages whose effects are far larger — an interaction of 1–1.5 in log-odds against a
 * prior sd of 0.1 — would otherwise be shrunk hard and get intervals that miss the truth however
 * much data arrive (an outside check measured 62–65% coverage of 95% intervals at 5,000 visitors
 * per combination). Each scale may therefore grow to 2, 4, 8 or 16 times its setting when the
 * marginal likelihood says so; it never shrinks below the setting, because the simulator showed
 * narrower learned priors cost regret (stop 8: a learned interaction scale of ¼–2× raised the
 * reference regret from 810 to 894). The hyperprior on log₂ of each multiple is a standard normal
 * (common practice, no source: one doubling is one sd), so the data must earn every doubling.
 *
 * The score of a pair of multiples is the log marginal likelihood of the pooled effects β under
 * prior N(μ0, P0⁻¹) given the sites' Gaussian message N(M⁻¹V, M⁻¹) (hierarchy.ts):
 *   log Z = ½ log|P0| − ½ μ0ᵀP0μ0 − ½ log|P0 + M| + ½ hᵀ(P0 + M)⁻¹h,  h = P0μ0 + V
 * (completing the square; Bishop, PRML 2006, eq. 3.86 for the Bayesian linear-Gaussian evidence,
 * and Berger 1985 §4.5 for type-II maximum likelihood). Every grid point costs a Cholesky factor
 * of a d×d matrix — at d ≈ 400 all 25 took 1.5 s of a 4 s fold — so the search walks: from the
 * last choice it moves to the best of the four neighbouring grid points while that improves the
 * score, usually 3–5 evaluations. The walk ends at the grid's best point whenever the score has a
 * single peak on the grid, which is not guaranteed; priorScaleSearch.test.ts compares the walk
 * with the whole grid on simulated pages.
 */

/** Multiples of the settings' main-effect and interaction prior scales. */
export interface PriorScales {
  main: number;
  interaction: number;
}

export const UNIT_SCALES: PriorScales = Object.freeze({ main: 1, interaction: 1 });

/** The grid of multiples of each scale: 1, 2, 4, 8, 16. */
export const SCALE_MULTIPLES = [1, 2, 4, 8, 16];

/** Log hyperprior of a pair of multiples (up to a constant). */
export function logScaleHyperprior(scales: PriorScales): number {
  return -0.5 * (Math.log2(scales.main) ** 2 + Math.log2(scales.interaction) ** 2);
}

/**
 * The pair on the grid with the highest `logEvidence + logScaleHyperprior` that a walk from `start`
 * reaches (see the header), and what `evaluate` returned for it.
 */
export function searchPriorScales<T extends { logEvidence: number }>(evaluate: (scales: PriorScales) => T, interactions: boolean, start: PriorScales = UNIT_SCALES): { scales: PriorScales; value: T } {
  const last = SCALE_MULTIPLES.length - 1;
  const seen = new Map<number, { scales: PriorScales; value: T; score: number }>();
  const at = (i: number, j: number) => {
    let point = seen.get(i * SCALE_MULTIPLES.length + j);
    if (!point) {
      const scales = { main: SCALE_MULTIPLES[i], interaction: SCALE_MULTIPLES[j] };
      const value = evaluate(scales);
      point = { scales, value, score: value.logEvidence + logScaleHyperprior(scales) };
      seen.set(i * SCALE_MULTIPLES.length + j, point);
    }
    return point;
  };
  let i = gridIndex(start.main);
  let j = interactions ? gridIndex(start.interaction) : 0;
  let here = at(i, j);
  for (;;) {
    let best = { i, j, point: here };
    for (const [di, dj] of interactions ? NEIGHBOURS : NEIGHBOURS.slice(0, 2)) {
      const ni = i + di;
      const nj = j + dj;
      if (ni < 0 || ni > last || nj < 0 || nj > last) continue;
      const point = at(ni, nj);
      if (point.score > best.point.score) best = { i: ni, j: nj, point };
    }
    if (best.point === here) return { scales: here.scales, value: here.value };
    ({ i, j, point: here } = best);
  }
}

const NEIGHBOURS: [number, number][] = [
  [1, 0],
  [-1, 0],
  [0, 1],
  [0, -1],
];

/**
 * Index in SCALE_MULTIPLES of the multiple nearest `multiple` in log scale — log₂ of it, since the
 * grid is 2⁰ … 2⁴ — clamped to the grid (index 0 for a value that is not a positive number).
 */
function gridIndex(multiple: number): number {
  const i = Math.round(Math.log2(multiple));
  return Number.isFinite(i) ? Math.max(0, Math.min(SCALE_MULTIPLES.length - 1, i)) : 0;
}
