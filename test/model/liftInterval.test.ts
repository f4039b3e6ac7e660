import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { liftInterval } from "../../src/model/liftInterval.ts";

describe("liftInterval", () => {
  it("reproduces Newcombe's (1998) worked examples for method 10", () => {
    // R. G. Newcombe (1998), Statistics in Medicine 17:873–890, Table II, method 10 (hybrid score,
    // no continuity correction), 95% limits to 4 decimals — from memory.
    const examples: [number, number, number, number, number, number][] = [
      [56, 70, 48, 80, 0.0524, 0.3339],
      [9, 10, 3, 10, 0.1705, 0.809],
      [6, 7, 2, 7, 0.0582, 0.8062],
      [5, 56, 0, 29, -0.0381, 0.1926],
      [0, 10, 0, 20, -0.1611, 0.2775],
      [0, 10, 0, 10, -0.2775, 0.2775],
      [10, 10, 0, 20, 0.6791, 1],
      [10, 10, 0, 10, 0.6075, 1],
    ];
    for (const [x1, n1, x2, n2, lower, upper] of examples) {
      const { absolute } = liftInterval(x1, n1, x2, n2);
      expect(absolute.estimate).toBeCloseTo(x1 / n1 - x2 / n2, 14);
      expect(absolute.lower).toBeCloseTo(lower, 4);
      expect(absolute.upper).toBeCloseTo(upper, 4);
    }
  });

  it("gives the log-ratio (Katz) interval for the relative lift", () => {
    // Agresti, "An Introduction to Categorical Data Analysis": placebo 189/11034 vs aspirin 104/11037,
    // relative risk 1.82 with 95% lower limit 1.43 (from memory). Upper limit by hand from the Katz et
    // al. (1978) formula: SE = √(1/189 − 1/11034 + 1/104 − 1/11037) = 0.121347,
    // exp(0.597628 + 1.959964·SE) = 2.305884 (worked with Python's math module).
    const { relative } = liftInterval(189, 11034, 104, 11037);
    expect(relative.estimate + 1).toBeCloseTo(1.82, 2);
    expect(relative.lower + 1).toBeCloseTo(1.43, 2);
    expect(relative.upper + 1).toBeCloseTo(2.305884, 5);
    expect(relative.method).toContain("log rate ratio");
  });

  it("narrows with a lower confidence level (90% inside 95%)", () => {
    const wide = liftInterval(40, 500, 25, 500, 0.95);
    const narrow = liftInterval(40, 500, 25, 500, 0.9);
    expect(narrow.absolute.lower).toBeGreaterThan(wide.absolute.lower);
    expect(narrow.absolute.upper).toBeLessThan(wide.absolute.upper);
    expect(narrow.relative.lower).toBeGreaterThan(wide.relative.lower);
    expect(narrow.absolute.method).toMatch(/^90%/);
  });

  it("stays finite with zero conversions, and says the relative lift was corrected", () => {
    for (const [x1, n1, x2, n2] of [
      [0, 100, 0, 100],
      [3, 100, 0, 100],
      [0, 100, 3, 100],
      [100, 100, 0, 5],
    ]) {
      const r = liftInterval(x1, n1, x2, n2);
      for (const v of [r.absolute, r.relative]) {
        expect(Number.isFinite(v.estimate) && Number.isFinite(v.lower) && Number.isFinite(v.upper)).toBe(true);
        expect(v.lower).toBeLessThanOrEqual(v.estimate);
        expect(v.upper).toBeGreaterThanOrEqual(v.estimate);
      }
      expect(r.relative.method).toContain("0.5 added");
    }
  });

  it("rejects bad counts and levels", () => {
    expect(() => liftInterval(1, 0, 1, 10)).toThrowError(FacetwiseError);
    expect(() => liftInterval(1, 10, 1, 10, 1)).toThrowError(/level/);
    expect(() => liftInterval(1, 10, 12, 10)).toThrowError(/more than/);
  });
});
