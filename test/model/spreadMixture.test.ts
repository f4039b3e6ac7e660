import { describe, expect, it } from "vitest";
import type { Gaussian } from "../../src/model/hierarchy.ts";
import { covarianceFromCholesky, factorSpd } from "../../src/model/linalg.ts";
import { mixGaussians } from "../../src/model/spreadMixture.ts";

const gaussian = (mean: number[], cov: number[]): Gaussian => {
  const d = mean.length;
  const precision = covarianceFromCholesky(factorSpd(Float64Array.from(cov), d, "test"), d);
  return { precision, mean: Float64Array.from(mean), chol: factorSpd(precision, d, "test") };
};

// Law of total expectation and variance: E[X] = E[E[X|K]], Var X = E[Var(X|K)] + Var(E[X|K])
// (any probability text, e.g. Ross, A First Course in Probability, §7.5).
describe("moment matching a mixture of Gaussians", () => {
  it("gives the mixture's mean and variance in one dimension", () => {
    // ¼·N(0, 1) + ¾·N(2, 4): mean 1.5, variance ¼·1 + ¾·4 + ¼·(0 − 1.5)² + ¾·(2 − 1.5)² = 3.25 + 0.75 = 4
    const g = mixGaussians(1, [{ weight: 0.25, gaussian: gaussian([0], [1]) }, { weight: 0.75, gaussian: gaussian([2], [4]) }], "test");
    expect(g.mean[0]).toBeCloseTo(1.5, 12);
    expect(1 / g.precision[0]).toBeCloseTo(4, 12);
    expect(g.chol[0] ** 2).toBeCloseTo(g.precision[0], 12);
  });

  it("adds the spread of the means as a covariance between coordinates", () => {
    // ½·N((0,0), I) + ½·N((2,2), I): mean (1,1), covariance I + [[1,1],[1,1]] = [[2,1],[1,2]]
    const g = mixGaussians(2, [{ weight: 0.5, gaussian: gaussian([0, 0], [1, 0, 0, 1]) }, { weight: 0.5, gaussian: gaussian([2, 2], [1, 0, 0, 1]) }], "test");
    expect([...g.mean]).toEqual([1, 1]);
    const cov = covarianceFromCholesky(g.chol, 2);
    [2, 1, 1, 2].forEach((v, i) => expect(cov[i]).toBeCloseTo(v, 12));
  });
});
