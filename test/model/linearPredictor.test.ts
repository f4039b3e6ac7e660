import { describe, expect, it } from "vitest";
import { factorSpd } from "../../src/model/linalg.ts";
import { linearPredictor, linearPredictors } from "../../src/model/linearPredictor.ts";

describe("linear predictor posterior", () => {
  it("has mean xᵀμ and variance xᵀP⁻¹x (2×2 inverse by hand)", () => {
    // P = [[4, 1], [1, 3]] ⇒ P⁻¹ = (1/11)[[3, −1], [−1, 4]] (adjugate over det 11).
    // x = (1, 1): xᵀP⁻¹x = (3 − 1 − 1 + 4)/11 = 5/11; x = (0, 1): 4/11. Index 2 = d is the zero slot.
    const precision = Float64Array.from([4, 1, 1, 3]);
    const g = { precision, mean: Float64Array.from([-3, 0.4]), chol: factorSpd(precision.slice(), 2, "test") };
    const scratch = new Float64Array(2);
    const both = linearPredictor(g, 2, [0, 1], scratch);
    expect(both.mean).toBeCloseTo(-2.6, 14);
    expect(both.sd).toBeCloseTo(Math.sqrt(5 / 11), 14);
    const second = linearPredictor(g, 2, [2, 1, 2], scratch);
    expect(second.mean).toBeCloseTo(0.4, 14);
    expect(second.sd).toBeCloseTo(Math.sqrt(4 / 11), 14);
  });
});

describe("linear predictors of many combinations", () => {
  it("agree with one forward solve each after switching to the covariance", () => {
    // Same 2×2 hand example (P⁻¹ = (1/11)[[3, −1], [−1, 4]]): the switch happens after 2d/3 queries,
    // so repeated queries exercise both paths.
    const precision = Float64Array.from([4, 1, 1, 3]);
    const g = { precision, mean: Float64Array.from([-3, 0.4]), chol: factorSpd(precision.slice(), 2, "test") };
    const predictorOf = linearPredictors(g, 2);
    for (let round = 0; round < 3; round++) {
      const both = predictorOf([0, 1]);
      expect(both.mean).toBeCloseTo(-2.6, 14);
      expect(both.sd).toBeCloseTo(Math.sqrt(5 / 11), 14);
      const second = predictorOf([2, 1, 2]);
      expect(second.sd).toBeCloseTo(Math.sqrt(4 / 11), 14);
    }
  });
});
