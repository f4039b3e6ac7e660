/**
 * Typed access to the parts of jStat (npm "jstat", a devDependency) the statistics tests compare
 * against. jstat ships CommonJS without type declarations (module.exports = jStat), so it is
 * loaded through createRequire and given just the signatures used.
 */
import { createRequire } from "node:module";

interface JStat {
  normal: { cdf(x: number, mean: number, sd: number): number; inv(p: number, mean: number, sd: number): number; pdf(x: number, mean: number, sd: number): number };
  gammafn(x: number): number;
  /** Hypergeometric pmf: k successes in n draws from a population of N holding m successes. */
  hypgeom: { pdf(k: number, N: number, m: number, n: number): number };
  chisquare: { cdf(x: number, dof: number): number };
}

export const jStat = createRequire(import.meta.url)("jstat") as JStat;
