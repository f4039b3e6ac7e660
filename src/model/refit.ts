/**
 * The fold's fit: every segment's mode of prior × the likelihood of all its counts, with the
 * Laplace approximation there, fitted jointly with the pooled effects and the segment spread τ.
 *
 * Segment s's prior is the leave-one-out cavity the hierarchy builds from every other segment's
 * site (hierarchy.ts); its posterior is cavity × the exact likelihood of its counts, approximated
 * by Laplace at the mode (newton.ts). The site that mode leaves (the likelihood's expansion at the
 * mode, newton.ts `likelihoodSite`) in turn informs the other segments' cavities. Iterating
 * "cavities → modes → sites" to a fixed point is Laplace propagation (Smola, Vishwanathan &
 * Eskin, "Laplace Propagation", NIPS 2003), expectation propagation's Laplace variant (Minka 2001,
 * ch. 3). Each sweep updates all segments from the same cavities; τ and the prior scales are
 * learned at each sweep's pooling (spreadSearch.ts, priorScaleSearch.ts). A sweep ends the loop when every segment's posterior mean lies within
 * 0.01 posterior sd (Mahalanobis) of the mode its site was taken at, and τ and the scales did not move.
 * The posteriors returned then average over τ's posterior on its grid (hierarchy.ts
 * `integrateSpread`, spreadMixture.ts); the cavities, and so the modes, stay those of the most
 * probable τ.
 *
 * Because every fold refits from the counts, warm-started from the last modes, the result depends
 * only on the counts — not on how the data were split into folds — and approximation errors do
 * not accumulate across folds (DESIGN.md "Round 2 design decisions": sequential Laplace updates of
 * the previous posterior were measured to drift by up to 0.58 sd over 1,000 folds).
 */
import { rowBlock, type SegmentCounts } from "./counts.ts";
import type { Design } from "./design.ts";
import { computePosteriors, integrateSpread, type Pooled, type Posteriors, type SpreadChoice } from "./hierarchy.ts";
import { laplaceFit, likelihoodSite, type RowBlock } from "./newton.ts";
import type { PageSettings } from "./settings.ts";
import { type SegmentData, type Site } from "./state.ts";

/** What a segment brings to the fit: its counts, the last mode (null when never fitted), its fold count. */
export interface RefitInput {
  counts: SegmentCounts;
  mode: Float64Array | null;
  folds: number;
}

export interface RefitResult {
  segments: Map<string, SegmentData>;
  posteriors: Posteriors;
  sweeps: number;
}

/** Sweeps beyond which the fit stops even if not converged (the next fold continues from there). */
export const MAX_SWEEPS = 12;
/** Convergence: (mean − mode)ᵀ P (mean − mode) ≤ TOLERANCE², i.e. within 0.01 sd in every direction. */
const TOLERANCE = 0.01;

export function refit(design: Design, settings: PageSettings, inputs: Map<string, RefitInput>, spread: SpreadChoice): RefitResult {
  const d = design.dimension;
  const modes = new Map<string, Float64Array | null>();
  const sites = new Map<string, Site>();
  const blocks = new Map<string, RowBlock>();
  for (const [segment, input] of inputs) {
    blocks.set(segment, rowBlock(design, input.counts));
    modes.set(segment, input.mode);
    sites.set(segment, siteAt(d, input, blocks.get(segment)!, input.mode));
  }
  // Each pooling computed for the current sites, by τ's grid step, for integrateSpread to reuse.
  let poolings = new Map<number, Pooled>();
  let choice: SpreadChoice = { ...spread, poolings };
  let posteriors = computePosteriors(design, settings, sites, undefined, choice);
  let sweeps = 0;
  while (sweeps < MAX_SWEEPS) {
    sweeps++;
    for (const [segment, input] of inputs) {
      const cavity = posteriors.cavities.get(segment)!;
      const block = blocks.get(segment)!;
      const fit = laplaceFit(cavity, d, block, `the fit of segment "${segment}"`, modes.get(segment) ?? undefined);
      modes.set(segment, fit.mode);
      sites.set(segment, siteAt(d, input, block, fit.mode));
    }
    const { segmentSpread: tau, priorScales } = posteriors;
    poolings = new Map();
    choice = { tau, scales: priorScales, learn: spread.learn, poolings };
    posteriors = computePosteriors(design, settings, sites, undefined, choice);
    const same = posteriors.segmentSpread === tau && posteriors.priorScales.main === priorScales.main && posteriors.priorScales.interaction === priorScales.interaction;
    if (same && converged(d, posteriors, modes)) break;
  }
  // The fit runs at τ's most probable value; the posteriors it returns average over τ (spreadMixture.ts).
  if (spread.learn) posteriors = integrateSpread(design, settings, sites, posteriors, poolings);
  const segments = new Map<string, SegmentData>();
  for (const [segment, input] of inputs) segments.set(segment, { counts: input.counts, mode: modes.get(segment)!, site: sites.get(segment)! });
  return { segments, posteriors, sweeps };
}

function siteAt(d: number, input: RefitInput, block: RowBlock, mode: Float64Array | null): Site {
  const { counts, folds } = input;
  const base = { visitors: counts.visitors, conversions: counts.conversions, folds };
  // A segment never fitted has no site yet: its first cavity is then the full pooled prediction.
  if (mode === null) return { lambda: new Float64Array(d * d), eta: new Float64Array(d), ...base };
  return { ...likelihoodSite(d, block, mode), ...base };
}

function converged(d: number, posteriors: Posteriors, modes: Map<string, Float64Array | null>): boolean {
  for (const [segment, mode] of modes) {
    const g = posteriors.segments.get(segment)!;
    let q = 0;
    for (let i = 0; i < d; i++) {
      const di = g.mean[i] - mode![i];
      let s = 0;
      for (let j = 0; j < d; j++) s += g.precision[i * d + j] * (g.mean[j] - mode![j]);
      q += di * s;
    }
    if (!(q <= TOLERANCE * TOLERANCE)) return false;
  }
  return true;
}
