import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { crossCheck } from "../../src/model/crossCheck.ts";

describe("crossCheck", () => {
  it("combines the z-test, Fisher's test and the lifts for leader vs baseline", () => {
    // Fisher's tea-tasting table read as leader 3/4 vs baseline 1/4 (Fisher 1935): one-sided 17/70.
    const tea = crossCheck({ visitors: 4, conversions: 3 }, { visitors: 4, conversions: 1 });
    expect(tea.fisher.greater).toBeCloseTo(17 / 70, 14);
    expect(tea.fisher.twoSided).toBeCloseTo(34 / 70, 14);
    // Hand computation, pooled z: p̄ = 0.5, SE = √(0.25·0.5) = 0.353553, z = 0.5 / SE = √2.
    expect(tea.zTest.z).toBeCloseTo(Math.SQRT2, 12);
    expect(tea.lift.absolute.estimate).toBeCloseTo(0.5, 14);
    expect(tea.lift.relative.estimate).toBeCloseTo(2, 12); // 0.75 / 0.25 − 1

    // Newcombe (1998) example (a), 56/70 vs 48/80, method 10: 0.0524 to 0.3339 (from memory).
    const r = crossCheck({ visitors: 70, conversions: 56 }, { visitors: 80, conversions: 48 });
    expect(r.lift.absolute.lower).toBeCloseTo(0.0524, 4);
    expect(r.lift.absolute.upper).toBeCloseTo(0.3339, 4);
  });

  it("always carries the adaptive-allocation warning in plain words", () => {
    const r = crossCheck({ visitors: 5000, conversions: 260 }, { visitors: 400, conversions: 14 });
    expect(r.warning).toMatch(/fixed, pre-planned share of traffic/);
    expect(r.warning).toMatch(/picked because it looked best/);
    expect(r.warning).toMatch(/fresh fixed-split test/);
  });

  it("gives finite figures when an arm has no conversions", () => {
    for (const [leader, baseline] of [
      [{ visitors: 900, conversions: 12 }, { visitors: 45, conversions: 0 }],
      [{ visitors: 900, conversions: 0 }, { visitors: 45, conversions: 0 }],
      [{ visitors: 30, conversions: 30 }, { visitors: 45, conversions: 0 }],
    ]) {
      const r = crossCheck(leader, baseline);
      const figures = [
        r.zTest.z, r.zTest.pValue, r.fisher.less, r.fisher.greater, r.fisher.twoSided,
        r.lift.absolute.estimate, r.lift.absolute.lower, r.lift.absolute.upper,
        r.lift.relative.estimate, r.lift.relative.lower, r.lift.relative.upper,
      ];
      for (const v of figures) expect(Number.isFinite(v)).toBe(true);
      // The result must survive a JSON round trip unchanged (reports and exports are JSON).
      expect(JSON.parse(JSON.stringify(r))).toEqual(r);
    }
  });

  it("rejects an arm without visitors, naming it", () => {
    expect(() => crossCheck({ visitors: 100, conversions: 3 }, { visitors: 0, conversions: 0 })).toThrowError(
      FacetwiseError,
    );
    expect(() => crossCheck({ visitors: 10, conversions: 11 }, { visitors: 10, conversions: 1 })).toThrowError(
      /leader\.conversions/,
    );
  });
});
