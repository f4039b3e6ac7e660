import { describe, expect, it } from "vitest";
import { quantileInPlace } from "../../src/model/quantile.ts";

describe("sample quantiles", () => {
  it("follow Hyndman & Fan definition 7 (linear interpolation, as R's default quantile type)", () => {
    // For 1..10: the 0.25 quantile is 1 + 0.25·9 = 3.25, the 0.975 quantile is 1 + 0.975·9 = 9.775.
    const xs = () => Float64Array.from([7, 3, 10, 1, 5, 9, 2, 8, 6, 4]);
    expect(quantileInPlace(xs(), 0.25)).toBeCloseTo(3.25, 12);
    expect(quantileInPlace(xs(), 0.975)).toBeCloseTo(9.775, 12);
    expect(quantileInPlace(xs(), 0)).toBe(1);
    expect(quantileInPlace(xs(), 1)).toBe(10);
  });
});
