import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { sampleSizeTwoProportions } from "../../src/model/sampleSizeTwoProportions.ts";

describe("sampleSizeTwoProportions", () => {
  it("reproduces the textbook example: 10% vs 15%, α = 0.05 two-sided, power 0.8 → 686 per group", () => {
    // J. L. Fleiss, B. Levin & M. C. Paik (2003), ch. 4, the formula without continuity correction
    // (685.6, rounded up to 686).
    expect(sampleSizeTwoProportions({ p1: 0.1, p2: 0.15 })).toBe(686);
    expect(sampleSizeTwoProportions({ p1: 0.15, p2: 0.1 })).toBe(686); // symmetric in the two rates
  });

  it("matches hand computations of the same formula for other inputs", () => {
    // Worked by hand with Python's statistics.NormalDist quantiles (independent of this code):
    // 5% vs 10% → 434.43; one-sided 10% vs 15% → 539.93; 3.5% vs 3.85% (a 10% relative lift on a
    // landing page), power 0.9 → 60725.57; Bonferroni over 3 comparisons (α/3 each) → 914.68.
    expect(sampleSizeTwoProportions({ p1: 0.05, p2: 0.1 })).toBe(435);
    expect(sampleSizeTwoProportions({ p1: 0.1, p2: 0.15, sides: 1 })).toBe(540);
    expect(sampleSizeTwoProportions({ p1: 0.035, p2: 0.0385, power: 0.9 })).toBe(60726);
    expect(sampleSizeTwoProportions({ p1: 0.1, p2: 0.15, comparisons: 3 })).toBe(915);
  });

  it("applies Bonferroni as α / comparisons, and one-sided α equals two-sided 2α", () => {
    // Bonferroni (1936) / Dunn (1961): k comparisons at family-wise α test each at α / k.
    expect(sampleSizeTwoProportions({ p1: 0.02, p2: 0.025, comparisons: 4 })).toBe(
      sampleSizeTwoProportions({ p1: 0.02, p2: 0.025, alpha: 0.0125 }),
    );
    expect(sampleSizeTwoProportions({ p1: 0.02, p2: 0.025, sides: 1, alpha: 0.05 })).toBe(
      sampleSizeTwoProportions({ p1: 0.02, p2: 0.025, sides: 2, alpha: 0.1 }),
    );
  });

  it("rejects inputs that have no answer", () => {
    const bad: Parameters<typeof sampleSizeTwoProportions>[0][] = [
      { p1: 0.1, p2: 0.1 },
      { p1: 0, p2: 0.1 },
      { p1: 0.1, p2: 1 },
      { p1: 0.1, p2: 0.2, alpha: 0 },
      { p1: 0.1, p2: 0.2, power: 1 },
      { p1: 0.1, p2: 0.2, comparisons: 0 },
      { p1: 0.1, p2: 0.2, comparisons: 1.5 },
      { p1: 0.1, p2: 0.2, sides: 3 as 1 },
    ];
    for (const input of bad) {
      expect(() => sampleSizeTwoProportions(input)).toThrowError(FacetwiseError);
    }
    expect(() => sampleSizeTwoProportions({ p1: 0.1, p2: 0.1 })).toThrowError(/must differ from p1/);
  });
});
