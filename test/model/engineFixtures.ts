/**
 * Shared pieces of the engine tests: typed access to the reference library jStat (npm "jstat",
 * devDependency; CommonJS without types, loaded via createRequire) and small page builders.
 * Pages built here set workloads only; every check names its own outside source.
 */
import { createRequire } from "node:module";
import { buildDesign, type Design, type FoldRow, type PageSettings } from "../../src/model/index.ts";
import { writeActiveFeatures } from "../../src/model/design.ts";
import { computePosteriors } from "../../src/model/hierarchy.ts";
import { laplaceFit, type LaplaceResult, type RowBlock } from "../../src/model/newton.ts";

interface JStatEngineParts {
  normal: { cdf(x: number, mean: number, sd: number): number; inv(p: number, mean: number, sd: number): number };
  beta: { pdf(x: number, a: number, b: number): number; cdf(x: number, a: number, b: number): number; inv(p: number, a: number, b: number): number };
  chisquare: { inv(p: number, dof: number): number };
  binomial: { cdf(k: number, n: number, p: number): number };
}

export const jStat = createRequire(import.meta.url)("jstat") as JStatEngineParts;

/** A page whose factors f0, f1, … have the given level counts (levels l0, l1, …), all pairs. */
export function page(levels: number[], extra: { exclude?: Record<string, string>[]; interactions?: [string, string][] } = {}): Design {
  return buildDesign({
    factors: levels.map((count, f) => ({ name: `f${f}`, levels: Array.from({ length: count }, (_, l) => ({ name: `l${l}` })) })),
    ...extra,
  });
}

/**
 * The full-data Newton/Laplace fit of one segment's rows under that segment's prior (alone, a
 * segment's prior is the new-segment prior "*"): the reference the sequential folds are held to.
 */
export function fullDataFit(design: Design, settings: PageSettings, rows: FoldRow[]): LaplaceResult {
  const prior = computePosteriors(design, settings, new Map()).star;
  const m = design.activeCount;
  const keys = [...new Set(rows.map((r) => r.combination))];
  const block: RowBlock = { count: keys.length, m, idx: new Int32Array(keys.length * m), x: new Float64Array(keys.length * m).fill(1), n: new Float64Array(keys.length), k: new Float64Array(keys.length) };
  keys.forEach((key, r) => {
    writeActiveFeatures(design, key.split("|").map((p, f) => design.factors[f].levels.indexOf(p.split("=")[1])), block.idx, r * m);
    for (const row of rows) if (row.combination === key) { block.n[r] += row.n; block.k[r] += row.k; }
  });
  return laplaceFit(naturalPrior(prior.precision, prior.mean), design.dimension, block);
}

/** A Gaussian prior given by precision and mean, in the natural form laplaceFit takes (P, P·mean). */
export function naturalPrior(precision: Float64Array, mean: Float64Array): { precision: Float64Array; precisionMean: Float64Array } {
  const d = mean.length;
  const precisionMean = new Float64Array(d);
  for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) precisionMean[i] += precision[i * d + j] * mean[j];
  return { precision, precisionMean };
}
