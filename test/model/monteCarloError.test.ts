import { describe, expect, it } from "vitest";
import { monteCarloError } from "../../src/model/monteCarloError.ts";
import { jStat } from "./engineFixtures.ts";

describe("Monte-Carlo error of a share of draws", () => {
  it("is the binomial standard error", () => {
    expect(monteCarloError(0.5, 1000).standardError).toBeCloseTo(Math.sqrt(0.25 / 1000), 15);
    expect(monteCarloError(0.954, 8000).standardError).toBeCloseTo(Math.sqrt((0.954 * 0.046) / 8000), 15);
  });

  it("gives Wilson's score interval: Newcombe's worked examples", () => {
    // Newcombe, "Two-sided confidence intervals for the single proportion: comparison of seven
    // methods", Statistics in Medicine 17, 1998, Table I, method 3 (values from memory):
    // 81/263 → 0.2553–0.3662; 15/148 → 0.0624–0.1605; 0/20 → 0–0.1611; 1/29 → 0.0061–0.1718.
    const cases: [number, number, number, number][] = [[81, 263, 0.2553, 0.3662], [15, 148, 0.0624, 0.1605], [0, 20, 0, 0.1611], [1, 29, 0.0061, 0.1718]];
    for (const [x, n, lower, upper] of cases) {
      const e = monteCarloError(x / n, n);
      expect(e.lower).toBeCloseTo(lower, 4);
      expect(e.upper).toBeCloseTo(upper, 4);
    }
  });

  it("inverts the score test: at its bounds |p̂ − p|/√(p(1 − p)/M) is the normal quantile (jStat)", () => {
    const z = jStat.normal.inv(0.975, 0, 1);
    for (const [p, M] of [[0.3, 1000], [0.97, 1000], [0.999, 8000]]) {
      const e = monteCarloError(p, M);
      for (const b of [e.lower, e.upper]) expect(Math.abs(p - b) / Math.sqrt((b * (1 - b)) / M)).toBeCloseTo(z, 9);
    }
  });

  it("never claims certainty at 0 or M wins: the bound is near the rule of three", () => {
    // Hanley & Lippman-Hand (JAMA 1983): 0 events in M trials → 95% upper bound ≈ 3/M.
    const none = monteCarloError(0, 1000);
    expect(none.standardError).toBe(0);
    expect(none.upper).toBeGreaterThan(3 / 1000);
    expect(none.upper).toBeLessThan(4 / 1000);
    const all = monteCarloError(1, 1000);
    expect(all.upper).toBe(1);
    expect(1 - all.lower).toBeCloseTo(none.upper, 12);
  });
});
