import { describe, expect, it } from "vitest";
import { logHyperprior, nearestStep, searchSpread, SPREAD_STEPS, spreadFactor, spreadPosterior } from "../../src/model/spreadSearch.ts";

// The walk is checked against scores whose maximum is known by construction (no outside source).
describe("the spread search", () => {
  const counted = (evidence: (k: number) => number) => {
    const calls: number[] = [];
    const result = searchSpread((k) => {
      calls.push(k);
      return { logEvidence: evidence(k) };
    });
    return { ...result, calls };
  };

  it("keeps the setting when the data say nothing (flat evidence: the hyperprior decides)", () => {
    expect(counted(() => 0).step).toBe(0);
  });

  it("finds the maximum of a concave score and evaluates each step at most once", () => {
    for (const peak of [-3, -1, 2, 3]) {
      const { step, calls } = counted((k) => -10 * (k - peak) ** 2);
      expect(step).toBe(peak);
      expect(new Set(calls).size).toBe(calls.length);
    }
  });

  it("starts where it is told (the last fold's step) and reaches the same maximum", () => {
    for (const start of [-4, -1, 0, 3, 4]) {
      const calls: number[] = [];
      const { step } = searchSpread((k) => (calls.push(k), { logEvidence: -10 * (k - 2) ** 2 }), start);
      expect(step).toBe(2);
      expect(calls[0]).toBe(start);
    }
    // started at the maximum it only looks at the two neighbours
    let evaluations = 0;
    searchSpread((k) => (evaluations++, { logEvidence: -10 * (k - 2) ** 2 }), 2);
    expect(evaluations).toBe(3);
  });

  it("maps a τ to the nearest grid step, clamped to the grid", () => {
    expect(nearestStep(null, 0.1)).toBe(0);
    expect(nearestStep(0.1 * Math.SQRT2, 0.1)).toBe(1);
    expect(nearestStep(0.05, 0.1)).toBe(-2);
    expect(nearestStep(10, 0.1)).toBe(SPREAD_STEPS);
    expect(nearestStep(0.07, 0)).toBe(0);
  });

  it("stops at the end of the grid", () => {
    expect(counted((k) => 100 * k).step).toBe(SPREAD_STEPS);
    expect(counted((k) => -100 * k).step).toBe(-SPREAD_STEPS);
  });

  it("needs evidence to outweigh the hyperprior: a gain smaller than the prior's cost does not move", () => {
    const cost = logHyperprior(0) - logHyperprior(1);
    expect(counted((k) => (k === 1 ? 0.9 * cost : 0)).step).toBe(0);
    expect(counted((k) => (k === 1 ? 1.1 * cost : 0)).step).toBe(1);
  });

  it("puts the grid at the setting times 2^(k/2), with the hyperprior sd of log τ equal to ln 2", () => {
    expect(spreadFactor(2)).toBeCloseTo(2, 12);
    expect(spreadFactor(-4)).toBeCloseTo(0.25, 12);
    // One sd (a factor of 2) away costs ½ in log density.
    expect(logHyperprior(0) - logHyperprior(2)).toBeCloseTo(0.5, 12);
  });

  it("weighs the grid by evidence × hyperprior: with flat evidence, the hyperprior's normal on log τ read on the grid", () => {
    // log τ = (k/2)·ln 2 with sd ln 2, so the weight of step k is ∝ exp(−k²/8) (the normal density on the grid).
    const weights = spreadPosterior(0, () => ({ logEvidence: 0 }));
    expect(weights.map((w) => w.step)).toEqual([-4, -3, -2, -1, 0, 1, 2, 3, 4]);
    const total = weights.reduce((s, w) => s + Math.exp((-w.step * w.step) / 8), 0);
    for (const w of weights) expect(w.weight).toBeCloseTo(Math.exp((-w.step * w.step) / 8) / total, 12);
  });

  it("leaves out steps that carry less than a thousandth of the largest weight, wherever it starts", () => {
    for (const start of [-4, 0, 2, 4]) {
      const weights = spreadPosterior(start, (k) => ({ logEvidence: -4 * (k - 2) ** 2 - logHyperprior(k) }));
      // exp(−4) and exp(−16) relative to the peak at 2: steps 1 and 3 stay, 0 and 4 go.
      expect(weights.map((w) => w.step)).toEqual([1, 2, 3]);
      expect(weights.reduce((s, w) => s + w.weight, 0)).toBeCloseTo(1, 12);
      expect(weights[1].weight).toBeCloseTo(1 / (1 + 2 * Math.exp(-4)), 12);
    }
  });
});

