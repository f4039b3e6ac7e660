import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { twoProportionZTest } from "../../src/model/twoProportionZTest.ts";
import { jStat } from "./jstatReference.ts";

/** Pearson's X² for the 2×2 table, Σ (O − E)² / E over the four cells (Pearson 1900). */
function pearsonChiSquare(x1: number, n1: number, x2: number, n2: number): number {
  const cells = [x1, n1 - x1, x2, n2 - x2];
  const rows = [n1, n1, n2, n2];
  const cols = [x1 + x2, n1 + n2 - x1 - x2, x1 + x2, n1 + n2 - x1 - x2];
  const n = n1 + n2;
  return cells.reduce((sum, o, i) => {
    const e = (rows[i] * cols[i]) / n;
    return sum + (o - e) ** 2 / e;
  }, 0);
}

describe("twoProportionZTest", () => {
  it("matches a hand computation from the pooled formula", () => {
    // Fleiss, Levin & Paik (2003) ch. 4 formula, worked by hand (checked with a desk calculator,
    // Python's math.erfc): 120/1000 vs 100/1000, p̄ = 0.11, SE = √(0.11·0.89·(2/1000)) = 0.01399286,
    // z = 0.02 / SE = 1.429301, p = erfc(z/√2) = 0.152918.
    const r = twoProportionZTest(120, 1000, 100, 1000);
    expect(r.z).toBeCloseTo(1.429301, 6);
    expect(r.pValue).toBeCloseTo(0.152918, 6);
    expect(twoProportionZTest(100, 1000, 120, 1000).z).toBeCloseTo(-1.429301, 6);
  });

  it("reproduces the Physicians' Health Study chi-square", () => {
    // Agresti, "An Introduction to Categorical Data Analysis": myocardial infarction on placebo
    // 189/11034 vs aspirin 104/11037 gives Pearson X² = 25.01 (from memory). z² = X² for 2×2 tables.
    const r = twoProportionZTest(189, 11034, 104, 11037);
    expect(r.z ** 2).toBeCloseTo(25.01, 2);
  });

  it("equals Pearson's chi-square test without continuity correction (z² = X², same p)", () => {
    // Reference p-value: jstat 1.9.6 chi-square cdf with 1 degree of freedom.
    const cases: [number, number, number, number][] = [
      [30, 400, 45, 410],
      [7, 50, 2, 60],
      [350, 10000, 300, 9500],
      [0, 80, 6, 90],
    ];
    for (const [x1, n1, x2, n2] of cases) {
      const r = twoProportionZTest(x1, n1, x2, n2);
      const x2stat = pearsonChiSquare(x1, n1, x2, n2);
      expect(r.z ** 2).toBeCloseTo(x2stat, 9);
      expect(r.pValue).toBeCloseTo(1 - jStat.chisquare.cdf(x2stat, 1), 9);
    }
  });

  it("returns z = 0, p = 1 when there is no variation at all", () => {
    expect(twoProportionZTest(0, 100, 0, 300)).toEqual({ z: 0, pValue: 1 });
    expect(twoProportionZTest(50, 50, 20, 20)).toEqual({ z: 0, pValue: 1 });
  });

  it("rejects zero visitors, negative counts and more conversions than visitors", () => {
    expect(() => twoProportionZTest(0, 0, 1, 10)).toThrowError(/at least 1/);
    expect(() => twoProportionZTest(-1, 10, 1, 10)).toThrowError(FacetwiseError);
    expect(() => twoProportionZTest(11, 10, 1, 10)).toThrowError(/more than/);
  });
});
