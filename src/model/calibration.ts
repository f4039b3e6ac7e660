import { fail } from "../errors.ts";

export interface CalibrationBucket {
  /** Bucket edges on the predicted probability: [lower, upper), the last one includes 1. */
  lower: number;
  upper: number;
  count: number;
  /** Mean predicted probability in the bucket; null when the bucket is empty. */
  predicted: number | null;
  /** Observed conversion rate in the bucket; null when the bucket is empty. */
  observed: number | null;
}

export interface Calibration {
  /** Mean squared difference between prediction and outcome: 0 is perfect, 0.25 is a constant ½. */
  brier: number;
  buckets: CalibrationBucket[];
}

/**
 * How far predicted conversion probabilities can be trusted: the Brier score
 * BS = (1/N)·Σ (pᵢ − oᵢ)² and a reliability table of equal-width probability buckets with the
 * mean prediction and the observed rate in each (a well-calibrated model has them equal).
 *
 * Source: G. W. Brier (1950), "Verification of forecasts expressed in terms of probability",
 * Monthly Weather Review 78:1–3 (this is the binary form; Brier's original sums over both
 * outcome classes and is twice this). Reliability table: A. H. Murphy & R. L. Winkler (1977),
 * Applied Statistics 26:41–47; D. S. Wilks, "Statistical Methods in the Atmospheric Sciences",
 * the chapter on forecast verification.
 *
 * Throws INVALID_ARGUMENT for empty or unequal-length inputs, a prediction outside [0, 1], an
 * outcome other than 0 or 1, or a bucket count that is not a positive whole number.
 */
export function calibration(predicted: number[], outcomes: (0 | 1)[], buckets = 10): Calibration {
  if (predicted.length === 0) {
    throw fail("INVALID_ARGUMENT", { argument: "predicted", reason: "is empty: there is nothing to score" }, "predicted");
  }
  if (outcomes.length !== predicted.length) {
    throw fail(
      "INVALID_ARGUMENT",
      { argument: "outcomes", reason: `has ${outcomes.length} entries but predicted has ${predicted.length}; pair each prediction with its outcome` },
      "outcomes",
    );
  }
  if (!Number.isInteger(buckets) || buckets < 1) {
    throw fail("INVALID_ARGUMENT", { argument: "buckets", reason: `must be a whole number ≥ 1, got ${buckets}` }, "buckets");
  }
  const count = new Array<number>(buckets).fill(0);
  const sumPredicted = new Array<number>(buckets).fill(0);
  const sumObserved = new Array<number>(buckets).fill(0);
  let squared = 0;
  for (let i = 0; i < predicted.length; i++) {
    const p = predicted[i];
    const o = outcomes[i];
    if (!(p >= 0 && p <= 1)) {
      throw fail("INVALID_ARGUMENT", { argument: `predicted[${i}]`, reason: `must be a probability in [0, 1], got ${p}` }, "predicted");
    }
    if (o !== 0 && o !== 1) {
      throw fail("INVALID_ARGUMENT", { argument: `outcomes[${i}]`, reason: `must be 0 or 1, got ${String(o)}` }, "outcomes");
    }
    squared += (p - o) ** 2;
    const b = Math.min(buckets - 1, Math.floor(p * buckets)); // p = 1 goes in the last bucket
    count[b] += 1;
    sumPredicted[b] += p;
    sumObserved[b] += o;
  }
  return {
    brier: squared / predicted.length,
    buckets: count.map((n, b) => ({
      lower: b / buckets,
      upper: (b + 1) / buckets,
      count: n,
      predicted: n === 0 ? null : sumPredicted[b] / n,
      observed: n === 0 ? null : sumObserved[b] / n,
    })),
  };
}
