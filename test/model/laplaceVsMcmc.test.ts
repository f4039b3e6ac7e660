import { describe, expect, it } from "vitest";
import { combinationKey, createRng, foldState, initialState, parseSettings, type FoldRow } from "../../src/model/index.ts";
import { allowedCombinations } from "../../src/model/allowed.ts";
import { featureVector } from "../../src/model/design.ts";
import { computePosteriors } from "../../src/model/hierarchy.ts";
import { choleskyInverse, cholesky } from "../../src/model/linalg.ts";
import { logSigmoid } from "../../src/model/logistic.ts";
import { page } from "./engineFixtures.ts";

/**
 * The fold's posterior against the exact posterior, by a random-walk Metropolis sampler written
 * here (Metropolis et al., J. Chem. Phys. 21, 1953; Gaussian proposal scaled 2.38²/d times the
 * covariance, Gelman, Roberts & Gilks 1996, "Efficient Metropolis jumping rules", Bayesian
 * Statistics 5), four chains with the potential scale reduction R̂ of Gelman & Rubin (Statistical
 * Science 7, 1992) required below 1.01. Page 2×2×2 with all pairs (d = 7), one segment (whose
 * prior is the new-segment prior), 50 visitors per combination from a made-up truth. The issue's
 * bar: |Δmean| ≤ 0.15 posterior sd for every coefficient.
 */
describe("the fold's Laplace posterior against MCMC", () => {
  it("has every coefficient's mean within 0.15 sd of the exact posterior at 50 visitors per combination", () => {
    const design = page([2, 2, 2]);
    const settings = parseSettings({});
    const d = design.dimension;
    expect(d).toBe(7);
    const rng = createRng(2026);
    const combos = allowedCombinations(design);
    const truth = (c: number[]) => 1 / (1 + Math.exp(-(-2.2 + 0.4 * c[0] - 0.3 * c[1] + 0.2 * c[2] + 0.3 * c[0] * c[1])));
    const rows: FoldRow[] = combos.map((c) => {
      let k = 0;
      for (let v = 0; v < 50; v++) if (rng.next() < truth(c)) k++;
      return { segment: "s", combination: combinationKey(design, c), n: 50, k };
    });
    const laplace = foldState({ design, settings, state: initialState(design, settings), rows, now: 0 }).posteriors.segments.get("s")!;
    const prior = computePosteriors(design, settings, new Map()).star;
    const priorCov = choleskyInverse(prior.chol, d);
    const priorPrecision = prior.precision;
    const x = combos.map((c) => featureVector(design, c));
    const logPost = (t: Float64Array) => {
      let q = 0;
      for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) q += (t[i] - prior.mean[i]) * priorPrecision[i * d + j] * (t[j] - prior.mean[j]);
      let l = -0.5 * q;
      rows.forEach((r, c) => {
        let eta = 0;
        for (let i = 0; i < d; i++) eta += x[c][i] * t[i];
        l += r.k * logSigmoid(eta) + (r.n - r.k) * logSigmoid(-eta);
      });
      return l;
    };
    // Proposal: 2.38²/d × the Laplace covariance (only the proposal; the target is exact).
    const cov = choleskyInverse(laplace.chol, d);
    const scaled = cov.map((v) => (v * 2.38 * 2.38) / d);
    const l = cholesky(scaled, d)!;
    const chains = 4;
    const iterations = 60_000;
    const burn = 10_000;
    const sums = Array.from({ length: chains }, () => ({ m: new Float64Array(d), s: new Float64Array(d), n: 0 }));
    for (let ch = 0; ch < chains; ch++) {
      const r = createRng(100 + ch);
      // Over-dispersed starts: the prior mean plus 2 prior sds in random directions.
      const t = Float64Array.from(prior.mean, (m, i) => m + 2 * Math.sqrt(priorCov[i * d + i]) * (r.next() < 0.5 ? -1 : 1));
      let lp = logPost(t);
      const z = new Float64Array(d);
      const prop = new Float64Array(d);
      for (let it = 0; it < iterations; it++) {
        for (let i = 0; i < d; i++) z[i] = r.normal();
        for (let i = 0; i < d; i++) {
          let s = 0;
          for (let j = 0; j <= i; j++) s += l[i * d + j] * z[j];
          prop[i] = t[i] + s;
        }
        const lq = logPost(prop);
        if (Math.log(r.next()) < lq - lp) {
          t.set(prop);
          lp = lq;
        }
        if (it >= burn) {
          const acc = sums[ch];
          for (let i = 0; i < d; i++) {
            acc.m[i] += t[i];
            acc.s[i] += t[i] * t[i];
          }
          acc.n++;
        }
      }
    }
    const lapCov = choleskyInverse(laplace.chol, d);
    let worst = 0;
    let worstRhat = 0;
    for (let i = 0; i < d; i++) {
      const means = sums.map((a) => a.m[i] / a.n);
      const vars = sums.map((a, c) => (a.s[i] - a.n * means[c] ** 2) / (a.n - 1));
      const n = sums[0].n;
      const grand = means.reduce((a, b) => a + b, 0) / chains;
      const between = (n / (chains - 1)) * means.reduce((a, m) => a + (m - grand) ** 2, 0);
      const within = vars.reduce((a, b) => a + b, 0) / chains;
      const rhat = Math.sqrt(((n - 1) / n * within + between / n) / within);
      worstRhat = Math.max(worstRhat, rhat);
      const sd = Math.sqrt(within);
      worst = Math.max(worst, Math.abs(laplace.mean[i] - grand) / sd);
      expect(Math.sqrt(lapCov[i * d + i]) / sd).toBeGreaterThan(0.8);
    }
    console.log(`d = 7, 50 visitors per combination: worst |Laplace mean − MCMC mean| = ${worst.toFixed(3)} sd; R̂ ≤ ${worstRhat.toFixed(4)}`);
    expect(worstRhat).toBeLessThan(1.01);
    expect(worst).toBeLessThanOrEqual(0.15);
  });
});
