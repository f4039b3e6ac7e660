import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { normalCdf } from "../../src/model/normalCdf.ts";
import { normalQuantile } from "../../src/model/normalQuantile.ts";
import { jStat } from "./jstatReference.ts";

describe("normalQuantile", () => {
  it("matches standard normal table quantiles to 6 decimals", () => {
    // Standard normal tables (e.g. Abramowitz & Stegun 1964, Table 26.5; any statistics text's z table).
    const table: [number, number][] = [
      [0.5, 0],
      [0.8, 0.841621],
      [0.9, 1.281552],
      [0.95, 1.644854],
      [0.975, 1.959964],
      [0.99, 2.326348],
      [0.995, 2.575829],
      [0.999, 3.090232],
      [0.0005, -3.290527],
    ];
    for (const [p, z] of table) expect(normalQuantile(p)).toBeCloseTo(z, 6);
  });

  it("agrees with jStat's normal inverse over a grid of p", () => {
    // Reference: jstat 1.9.6 jStat.normal.inv.
    // Grid from 1e-4 to 0.999: jstat's inverse loses accuracy further out in the lower tail (its
    // erfc is 1 − erf), and above 0.999 p itself cannot be represented finely in a double. The deep
    // lower tail is covered by the round trip below against the tabulated tail of normalCdf.
    for (const p of [1e-4, 0.01, 0.02425, 0.1, 0.3, 0.6, 0.9, 0.97575, 0.999]) {
      expect(normalQuantile(p)).toBeCloseTo(jStat.normal.inv(p, 0, 1), 7);
    }
  });

  it("inverts normalCdf across the range, including the deep lower tail", () => {
    // Up to z = 5 only: above it Φ(z) is within 3e-7 of 1 and doubles cannot resolve it.
    for (let z = -30; z <= 5; z += 0.25) {
      const p = normalCdf(z);
      expect(Math.abs(normalQuantile(p) - z)).toBeLessThan(1e-8 * Math.max(1, Math.abs(z)));
    }
    // Below Φ(−37) the cdf underflows, so check the raw Acklam value against the asymptotic tail
    // series ln Φ(−x) ≈ −x²/2 − ln(x√(2π)) + ln(1 − 1/x² + 3/x⁴) (Abramowitz & Stegun 26.2.12).
    const x = -normalQuantile(1e-300);
    const logTail = -(x * x) / 2 - Math.log(x * Math.sqrt(2 * Math.PI)) + Math.log(1 - 1 / x ** 2 + 3 / x ** 4);
    expect(logTail).toBeCloseTo(Math.log(1e-300), 5);
  });

  it("rejects p outside (0, 1) with INVALID_ARGUMENT", () => {
    for (const p of [0, 1, -0.1, 1.5, Number.NaN]) {
      expect(() => normalQuantile(p)).toThrowError(FacetwiseError);
      try {
        normalQuantile(p);
      } catch (e) {
        expect((e as FacetwiseError).code).toBe("INVALID_ARGUMENT");
        expect((e as FacetwiseError).message).toContain("between 0 and 1");
      }
    }
  });
});
