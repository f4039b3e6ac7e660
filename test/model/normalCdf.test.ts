import { describe, expect, it } from "vitest";
import { normalCdf } from "../../src/model/normalCdf.ts";
import { jStat } from "./jstatReference.ts";

describe("normalCdf", () => {
  it("matches jStat's normal cdf across a grid from −8 to 8", () => {
    // Reference: jstat 1.9.6 jStat.normal.cdf (erf by Chebyshev series). Absolute agreement only:
    // jstat computes 1 − erf, so its far lower tail has poor relative accuracy.
    for (let z = -8; z <= 8; z += 0.05) {
      expect(Math.abs(normalCdf(z) - jStat.normal.cdf(z, 0, 1))).toBeLessThan(1e-14);
    }
  });

  it("matches standard table values, including the far tail", () => {
    // Standard normal tables (Abramowitz & Stegun 1964, Table 26.1 / 26.2 style values), from memory.
    expect(normalCdf(0)).toBe(0.5);
    expect(normalCdf(1.96)).toBeCloseTo(0.9750021048517795, 14);
    expect(normalCdf(-1)).toBeCloseTo(0.15865525393145705, 14);
    expect(normalCdf(2.5)).toBeCloseTo(0.9937903346742238, 14);
    // Tail values, relative accuracy (these are where small p-values live).
    expect(normalCdf(-5) / 2.866515718791939e-7).toBeCloseTo(1, 9);
    expect(normalCdf(-10) / 7.619853024160527e-24).toBeCloseTo(1, 7);
  });

  it("is symmetric, monotone and bounded", () => {
    // Φ(−z) = 1 − Φ(z) (definition of a symmetric distribution).
    let previous = 0;
    for (let z = -40; z <= 40; z += 0.37) {
      const p = normalCdf(z);
      expect(p).toBeGreaterThanOrEqual(previous);
      expect(p).toBeLessThanOrEqual(1);
      expect(normalCdf(-z) + p).toBeCloseTo(1, 14);
      previous = p;
    }
    expect(normalCdf(-Infinity)).toBe(0);
    expect(normalCdf(Infinity)).toBe(1);
  });
});
