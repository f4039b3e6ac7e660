import { describe, expect, it } from "vitest";
import { type BinTotals, calibration, wilsonInterval } from "../../src/model/calibration.ts";
import { jStat } from "./jstatReference.ts";

/** Totals of a bin of `picks` picks all predicted `p`, `conversions` of which converted. */
function bin(picks: number, conversions: number, p: number): BinTotals {
  return {
    picks, conversions, sumPredicted: picks * p, minPredicted: p, maxPredicted: p,
    logLoss: -conversions * Math.log(p) - (picks - conversions) * Math.log(1 - p),
    squaredError: conversions * (1 - p) ** 2 + (picks - conversions) * p ** 2,
  };
}

describe("Wilson score interval", () => {
  it("matches Newcombe's worked examples", () => {
    // R. G. Newcombe (1998), "Two-sided confidence intervals for the single proportion: comparison
    // of seven methods", Statistics in Medicine 17:857–872, Table I, method 3 (score, no continuity
    // correction) — four decimals, from memory.
    const table: [number, number, number, number][] = [[81, 263, 0.2553, 0.3662], [15, 148, 0.0624, 0.1605], [0, 20, 0, 0.1611], [1, 29, 0.0061, 0.1718]];
    for (const [k, n, lower, upper] of table) {
      const w = wilsonInterval(k, n);
      expect(w.lower).toBeCloseTo(lower, 4);
      expect(w.upper).toBeCloseTo(upper, 4);
    }
  });

  it("solves Wilson's score equation |p̂ − p| = z·√(p(1 − p)/n) with z from jStat", () => {
    // Wilson (1927): the bounds are the two roots in p of (p̂ − p)² = z² p(1 − p)/n.
    const z = jStat.normal.inv(0.975, 0, 1);
    for (const [k, n] of [[3, 100], [12, 100], [1, 7], [50, 60], [999, 1000]]) {
      const { lower, upper } = wilsonInterval(k, n);
      for (const p of [lower, upper]) expect((k / n - p) ** 2).toBeCloseTo((z * z * p * (1 - p)) / n, 12);
      expect(lower).toBeLessThan(k / n);
      expect(upper).toBeGreaterThan(k / n);
    }
  });
});

describe("prequential calibration from bin totals", () => {
  // Worked by hand: 100 picks predicted 5% with 4 conversions, 100 predicted 15% with 12.
  const report = calibration([bin(100, 4, 0.05), bin(100, 12, 0.15)]);

  it("gives each bin its mean prediction, observed rate and Wilson interval", () => {
    expect(report.enough).toBe(true);
    expect(report.picks).toBe(200);
    expect(report.conversions).toBe(16);
    expect(report.bins.map((b) => [b.predicted, b.observed, b.from, b.to])).toEqual([
      [expect.closeTo(0.05, 14), 0.04, 0.05, 0.05], [expect.closeTo(0.15, 14), 0.12, 0.15, 0.15],
    ]);
    expect(report.bins[0]).toMatchObject(wilsonInterval(4, 100));
  });

  it("scores log loss and its skill against the constant observed rate (Good 1952)", () => {
    // LL = [4(−ln .05) + 96(−ln .95) + 12(−ln .15) + 88(−ln .85)] / 200
    //    = [11.98293 + 4.92415 + 22.76544 + 14.30167] / 200 = 0.269871 (by hand, 6 decimals)
    // ȳ = 16/200 = 0.08; LL(ȳ) = −(0.08 ln 0.08 + 0.92 ln 0.92) = 0.202058 + 0.076711 = 0.278769
    // skill = 1 − 0.269871 / 0.278769 = 0.03192
    expect(report.observedRate).toBe(0.08);
    expect(report.logLoss).toBeCloseTo(0.269871, 5);
    expect(report.logLossSkill).toBeCloseTo(0.03192, 4);
  });

  it("scores Brier and the Brier skill score, consistent with Murphy's decomposition", () => {
    // BS = [4(.95²) + 96(.05²) + 12(.85²) + 88(.15²)] / 200 = (3.61 + 0.24 + 8.67 + 1.98) / 200 = 0.0725
    // Reference ȳ(1 − ȳ) = 0.0736 ⇒ BSS = 1 − 0.0725/0.0736 = 0.014946.
    expect(report.brier).toBeCloseTo(0.0725, 12);
    expect(report.brierSkill).toBeCloseTo(1 - 0.0725 / 0.0736, 12);
    // A. H. Murphy (1973), J. Applied Meteorology 12:595–600: with one forecast value per bin,
    // BS = reliability − resolution + uncertainty = Σnₖ(p̄ₖ − ōₖ)²/N − Σnₖ(ōₖ − ȳ)²/N + ȳ(1 − ȳ).
    const N = report.picks;
    const reliability = report.bins.reduce((s, b) => s + (b.picks * (b.predicted - b.observed) ** 2) / N, 0);
    const resolution = report.bins.reduce((s, b) => s + (b.picks * (b.observed - 0.08) ** 2) / N, 0);
    expect(reliability).toBeCloseTo(0.0005, 12);
    expect(resolution).toBeCloseTo(0.0016, 12);
    expect(report.brier).toBeCloseTo(reliability - resolution + 0.08 * 0.92, 12);
  });

  it("scores perfect forecasts of the constant rate with zero skill", () => {
    const flat = calibration([bin(300, 24, 0.08)]);
    expect(flat.logLossSkill).toBeCloseTo(0, 12);
    expect(flat.brierSkill).toBeCloseTo(0, 12);
  });

  it("says there is too little data instead of drawing bins", () => {
    const few = calibration([bin(99, 5, 0.05), bin(100, 12, 0.15)]);
    expect(few).toMatchObject({ picks: 199, conversions: 17, needs: { picks: 200, conversions: 10 }, enough: false, bins: [], logLoss: null, logLossSkill: null, brier: null });
    expect(calibration([bin(100, 4, 0.05), bin(100, 5, 0.15)]).enough).toBe(false);
    expect(calibration([])).toMatchObject({ picks: 0, conversions: 0, enough: false });
  });
});
