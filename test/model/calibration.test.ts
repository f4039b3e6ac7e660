import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { calibration } from "../../src/model/calibration.ts";

describe("calibration", () => {
  it("scores the textbook rain-forecast examples", () => {
    // The usual illustration of G. W. Brier (1950)'s score (e.g. the Wikipedia "Brier score"
    // article, from memory): forecast 70% and it rains → (0.7 − 1)² = 0.09; 30% and it rains → 0.49;
    // 50% → 0.25 either way; 100% and it rains → 0.
    expect(calibration([0.7], [1]).brier).toBeCloseTo(0.09, 14);
    expect(calibration([0.3], [1]).brier).toBeCloseTo(0.49, 14);
    expect(calibration([0.5], [0]).brier).toBeCloseTo(0.25, 14);
    expect(calibration([1], [1]).brier).toBe(0);
    // The score is the mean over forecasts: (0.09 + 0.49 + 0.25 + 0) / 4.
    expect(calibration([0.7, 0.3, 0.5, 1], [1, 1, 0, 1]).brier).toBeCloseTo(0.2075, 14);
  });

  it("satisfies Murphy's decomposition BS = reliability − resolution + uncertainty", () => {
    // A. H. Murphy (1973), "A new vector partition of the probability score", J. Applied Meteorology
    // 12:595–600: exact when every forecast in a bucket has the same value.
    const forecasts = [0.05, 0.25, 0.45, 0.65, 0.85];
    const predicted: number[] = [];
    const outcomes: (0 | 1)[] = [];
    const hits = [1, 2, 7, 9, 15];
    const counts = [20, 10, 12, 14, 18];
    forecasts.forEach((f, i) => {
      for (let j = 0; j < counts[i]; j++) {
        predicted.push(f);
        outcomes.push(j < hits[i] ? 1 : 0);
      }
    });
    const r = calibration(predicted, outcomes, 10);
    const n = predicted.length;
    const base = outcomes.reduce<number>((s, o) => s + o, 0) / n;
    let reliability = 0;
    let resolution = 0;
    for (const b of r.buckets) {
      if (b.count === 0) continue;
      reliability += (b.count * (b.predicted! - b.observed!) ** 2) / n;
      resolution += (b.count * (b.observed! - base) ** 2) / n;
    }
    expect(r.brier).toBeCloseTo(reliability - resolution + base * (1 - base), 12);
    // The buckets hold what went in: 0.05 → [0, 0.1) with 1 of 20 converting.
    expect(r.buckets[0]).toMatchObject({ lower: 0, upper: 0.1, count: 20 });
    expect(r.buckets[0].predicted).toBeCloseTo(0.05, 14);
    expect(r.buckets[0].observed).toBeCloseTo(0.05, 14);
    expect(r.buckets[1]).toEqual({ lower: 0.1, upper: 0.2, count: 0, predicted: null, observed: null });
    expect(r.buckets[8].count).toBe(18);
  });

  it("puts edges in the upper bucket and 1 in the last", () => {
    const r = calibration([0, 0.25, 0.5, 1], [0, 0, 1, 1], 4);
    expect(r.buckets.map((b) => b.count)).toEqual([1, 1, 1, 1]);
    expect(r.buckets[3]).toMatchObject({ lower: 0.75, upper: 1, predicted: 1, observed: 1 });
  });

  it("rejects inputs it cannot score", () => {
    expect(() => calibration([], [])).toThrowError(/empty/);
    expect(() => calibration([0.1, 0.2], [1])).toThrowError(/pair each prediction/);
    expect(() => calibration([1.2], [1])).toThrowError(FacetwiseError);
    expect(() => calibration([0.2], [2 as 1])).toThrowError(/0 or 1/);
    expect(() => calibration([0.2], [1], 0)).toThrowError(/buckets/);
  });
});
