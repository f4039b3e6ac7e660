/**
 * Shared pieces of the engine tests: typed access to the reference library jStat (npm "jstat",
 * devDependency; CommonJS without types, loaded via createRequire) and small page builders.
 * Pages built here set workloads only; every check names its own outside source.
 */
import { createRequire } from "node:module";
import { buildDesign, type Design } from "../../src/model/index.ts";

interface JStatEngineParts {
  normal: { cdf(x: number, mean: number, sd: number): number; inv(p: number, mean: number, sd: number): number };
  beta: { pdf(x: number, a: number, b: number): number; cdf(x: number, a: number, b: number): number; inv(p: number, a: number, b: number): number };
  chisquare: { inv(p: number, dof: number): number };
}

export const jStat = createRequire(import.meta.url)("jstat") as JStatEngineParts;

/** A page whose factors f0, f1, … have the given level counts (levels l0, l1, …), all pairs. */
export function page(levels: number[], extra: { exclude?: Record<string, string>[]; interactions?: [string, string][] } = {}): Design {
  return buildDesign({
    factors: levels.map((count, f) => ({ name: `f${f}`, levels: Array.from({ length: count }, (_, l) => ({ name: `l${l}` })) })),
    ...extra,
  });
}
