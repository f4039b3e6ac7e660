import { describe, expect, it } from "vitest";
import { intervalCoverage } from "../../src/sim/intervalCoverage.ts";

describe("coverage of the final intervals", () => {
  it("counts intervals holding the truth (ends included), overall and in segments with ≤ 10% of traffic", () => {
    // Hand-made: 10 intervals, 7 hold their truth; the 4 of segments with share ≤ 0.1 (0.1 itself
    // included) hold 3.
    const rows = [
      { share: 0.6, truth: 0.05, lower: 0.04, upper: 0.06 }, // inside
      { share: 0.6, truth: 0.04, lower: 0.04, upper: 0.06 }, // on the lower end: inside
      { share: 0.6, truth: 0.07, lower: 0.04, upper: 0.06 }, // above
      { share: 0.3, truth: 0.03, lower: 0.031, upper: 0.06 }, // below
      { share: 0.3, truth: 0.02, lower: 0.01, upper: 0.03 }, // inside
      { share: 0.3, truth: 0.02, lower: 0.01, upper: 0.02 }, // on the upper end: inside
      { share: 0.1, truth: 0.1, lower: 0.05, upper: 0.2 }, // inside (small)
      { share: 0.05, truth: 0.1, lower: 0.05, upper: 0.2 }, // inside (small)
      { share: 0.05, truth: 0.3, lower: 0.05, upper: 0.2 }, // above (small)
      { share: 0.05, truth: 0.06, lower: 0.05, upper: 0.2 }, // inside (small)
    ];
    const { overall, small } = intervalCoverage(rows);
    expect(overall).toMatchObject({ covered: 7, total: 10, share: 0.7 });
    expect(small).toMatchObject({ covered: 3, total: 4, share: 0.75 });
    // 95% Wilson interval of 7/10, by hand: centre (0.7 + 1.96²/20)/(1 + 1.96²/10) = 0.89208/1.38415
    // = 0.64449, half-width (1.96/1.38415)·√(0.021 + 1.96²/400) = 1.41601·0.174940 = 0.24772
    // ⇒ 0.3968 – 0.8922.
    expect(overall!.lower).toBeCloseTo(0.3968, 3);
    expect(overall!.upper).toBeCloseTo(0.8922, 3);
  });

  it("gives null where there are no intervals", () => {
    expect(intervalCoverage([])).toEqual({ overall: null, small: null });
    expect(intervalCoverage([{ share: 0.5, truth: 0.1, lower: 0, upper: 1 }]).small).toBeNull();
  });
});
