/**
 * The prior N(μ0, P0⁻¹) on the pooled coefficients β: independent normals with the intercept at
 * priorInterceptMean ± priorInterceptScale, main effects at 0 ± priorMainScale and interactions at
 * 0 ± priorInteractionScale (all page settings; scales are common practice, no source — see
 * settings.ts), each effect scale times its learned multiple (priorScaleSearch.ts). Returned in
 * natural form: diagonal precision and precision × mean.
 */
import type { Design } from "./design.ts";
import type { PriorScales } from "./priorScaleSearch.ts";
import type { PageSettings } from "./settings.ts";

export interface DiagonalPrior {
  precision: Float64Array; // diagonal entries
  precisionMean: Float64Array; // P0 μ0
}

export function priorFor(design: Design, settings: PageSettings, scales: PriorScales = { main: 1, interaction: 1 }): DiagonalPrior {
  const d = design.dimension;
  const firstPair = design.pairBase.length > 0 ? design.pairBase[0] : d;
  const precision = new Float64Array(d);
  const precisionMean = new Float64Array(d);
  for (let i = 0; i < d; i++) {
    const scale = i === 0 ? settings.priorInterceptScale : i < firstPair ? settings.priorMainScale * scales.main : settings.priorInteractionScale * scales.interaction;
    precision[i] = 1 / (scale * scale);
  }
  precisionMean[0] = precision[0] * settings.priorInterceptMean;
  return { precision, precisionMean };
}
