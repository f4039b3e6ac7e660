/**
 * The posterior conversion rate of any combinations in one segment (mean of σ(xᵀθ) over M
 * posterior samples and the exact 95% credible interval, as in the summaries), for reports and exports that
 * need more than the top ten. Segments without data of their own get the new-segment posterior.
 */
import { parseCombinationKey } from "./combinationKey.ts";
import { type Design, writeActiveFeatures } from "./design.ts";
import { computePosteriors, segmentPosterior } from "./hierarchy.ts";
import { scoresOf } from "./bestCombination.ts";
import { linearPredictors } from "./linearPredictor.ts";
import { createRng } from "./rng.ts";
import { drawSamples } from "./sampling.ts";
import type { PageSettings } from "./settings.ts";
import { checkStateMatches, type ModelState, sitesOf } from "./state.ts";
import { rateFromScores, type RateInterval } from "./summary.ts";

export function combinationRates(input: { design: Design; settings: PageSettings; state: ModelState; segment: string; combinations: string[]; seed: number }): Record<string, RateInterval> {
  const { design, settings, state, segment } = input;
  checkStateMatches(state, design);
  const combos = input.combinations.map((key) => parseCombinationKey(design, key));
  const own = segment !== "*" && state.segments.has(segment) ? [segment] : [];
  const posterior = segmentPosterior(computePosteriors(design, settings, sitesOf(state), own, { tau: state.segmentSpread, scales: state.priorScales, learn: false, integrate: true }), own.length > 0 ? segment : "*");
  const d = design.dimension;
  const M = settings.samples;
  const samples = drawSamples(posterior, d, M, createRng(input.seed));
  const idx = new Int32Array(design.activeCount);
  const predictorOf = linearPredictors(posterior, d);
  const out: Record<string, RateInterval> = {};
  combos.forEach((c, i) => {
    writeActiveFeatures(design, c, idx, 0);
    const scores = new Float64Array(M);
    scoresOf(idx, 0, idx.length, samples, M, scores);
    out[input.combinations[i]] = rateFromScores(scores, predictorOf(idx));
  });
  return out;
}
