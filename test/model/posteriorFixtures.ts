/**
 * Posteriors given directly (mean and independent sds) and one segment round on them, for the
 * tests of the report figures. They set workloads only; every check names its own outside source.
 */
import { allocateSegment, type SegmentRoundInput } from "../../src/model/allocateSegment.ts";
import type { Design } from "../../src/model/design.ts";
import type { Gaussian } from "../../src/model/hierarchy.ts";
import { createRng, parseSettings, type PageSettings } from "../../src/model/index.ts";
import { cholesky } from "../../src/model/linalg.ts";

/** A Gaussian posterior with the given mean and independent coordinates of the given sds. */
export function gaussian(mean: number[], sd: number[]): Gaussian {
  const d = mean.length;
  const precision = new Float64Array(d * d);
  sd.forEach((s, i) => (precision[i * d + i] = 1 / (s * s)));
  return { mean: Float64Array.from(mean), precision, chol: cholesky(precision, d)! };
}

export function round(design: Design, posterior: Gaussian, seed: number, settings: PageSettings = parseSettings({}), wasSettled = false) {
  const input: SegmentRoundInput = {
    design, settings, segment: "s", posterior, segmentSpread: 0.1, rng: createRng(seed), now: 0, frozen: false,
    active: new Map(), counters: new Map(), wasSettled,
  };
  return allocateSegment(input).summary;
}

