import { describe, expect, it } from "vitest";
import { combinationKey, createRng, parseSettings } from "../../src/model/index.ts";
import { allocateSegment } from "../../src/model/allocateSegment.ts";
import { allowedCombinations } from "../../src/model/allowed.ts";
import { factorSpd } from "../../src/model/linalg.ts";
import { gaussHermite, meanRate, predictedRates } from "../../src/model/predictedRate.ts";
import { writeActiveFeatures } from "../../src/model/design.ts";
import { linearPredictor } from "../../src/model/linearPredictor.ts";
import { sigmoid } from "../../src/model/logistic.ts";
import { page } from "./engineFixtures.ts";
import { jStat } from "./jstatReference.ts";

/** ∫ σ(m + s z) φ(z) dz by composite Simpson on z ∈ [−12, 12] with 24,000 intervals, φ from jStat. */
function simpson(m: number, s: number): number {
  const n = 24_000;
  const h = 24 / n;
  let sum = 0;
  for (let i = 0; i <= n; i++) {
    const z = -12 + i * h;
    const f = sigmoid(m + s * z) * jStat.normal.pdf(z, 0, 1);
    sum += (i === 0 || i === n ? 1 : i % 2 === 1 ? 4 : 2) * f;
  }
  return (sum * h) / 3;
}

describe("Gauss–Hermite rule", () => {
  it("has the closed-form nodes and weights for n = 2 and 3", () => {
    // Roots of H₂ = 4x² − 2 and H₃ = 8x³ − 12x; weights 2ⁿ⁻¹ n! √π / (n² Hₙ₋₁(xᵢ)²)
    // (Abramowitz & Stegun 1964, 25.4.46 and Table 25.10).
    const two = gaussHermite(2);
    expect(two.nodes[0]).toBeCloseTo(Math.SQRT1_2, 14);
    expect(two.nodes[1]).toBeCloseTo(-Math.SQRT1_2, 14);
    expect(two.weights[0]).toBeCloseTo(Math.sqrt(Math.PI) / 2, 14);
    const three = gaussHermite(3);
    expect(Array.from(three.nodes)).toEqual([expect.closeTo(Math.sqrt(1.5), 14), expect.closeTo(0, 14), expect.closeTo(-Math.sqrt(1.5), 14)]);
    expect(three.weights[1]).toBeCloseTo((2 * Math.sqrt(Math.PI)) / 3, 14);
    expect(three.weights[0]).toBeCloseTo(Math.sqrt(Math.PI) / 6, 14);
  });

  it("integrates x^(2k) e^(−x²) exactly up to degree 2n − 1 (32 nodes)", () => {
    // ∫ x^(2k) e^(−x²) dx = Γ(k + ½) (A&S 6.1 / 25.4.46), Γ from jStat.
    const { nodes, weights } = gaussHermite(32);
    for (let k = 0; k <= 20; k++) {
      let sum = 0;
      for (let i = 0; i < 32; i++) sum += weights[i] * nodes[i] ** (2 * k);
      expect(Math.abs(sum / jStat.gammafn(k + 0.5) - 1)).toBeLessThan(1e-8);
    }
  });
});

describe("predicted rate E[σ(a)], a ~ N(m, s²)", () => {
  it("matches Simpson integration of the logistic-normal integral", () => {
    for (const [m, s] of [[-3.5, 0.05], [-3.5, 0.4], [-2, 1], [0.7, 1.5], [-4, 2], [1, 3]]) {
      expect(Math.abs(meanRate(m, s) - simpson(m, s))).toBeLessThan(s <= 2 ? 1e-7 : 2e-5);
    }
  });

  it("is σ(m) at s = 0, ½ at m = 0 by symmetry, and above σ(m) for small rates (Jensen: σ is convex below ½)", () => {
    expect(meanRate(-3, 0)).toBe(sigmoid(-3));
    expect(meanRate(0, 1.7)).toBeCloseTo(0.5, 14);
    expect(meanRate(-3, 0.5)).toBeGreaterThan(sigmoid(-3));
  });

  it("agrees between the covariance and the forward-solve paths, and with the draws' mean the report shows", () => {
    const design = page([3, 3, 2]);
    const d = design.dimension;
    // A posterior of our own: precision A Aᵀ + 4I (A random), intercept near logit 3%.
    const rng = createRng(3);
    const a = Float64Array.from({ length: d * d }, () => rng.normal());
    const precision = new Float64Array(d * d);
    for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) {
      let s = i === j ? 4 : 0;
      for (let k = 0; k < d; k++) s += a[i * d + k] * a[j * d + k];
      precision[i * d + j] = s;
    }
    const mean = Float64Array.from({ length: d }, (_, j) => (j === 0 ? -3.5 : 0.3 * rng.normal()));
    const posterior = { precision, mean, chol: factorSpd(precision.slice(), d, "test") };
    const combos = allowedCombinations(design);
    expect(combos.length).toBeGreaterThan(d); // → the covariance path
    const all = predictedRates(design, posterior, combos);
    const active = new Int32Array(design.activeCount);
    const scratch = new Float64Array(d);
    combos.forEach((c, i) => {
      expect(all[i]).toBeCloseTo(predictedRates(design, posterior, [c])[0], 12);
      writeActiveFeatures(design, c, active, 0);
      const lp = linearPredictor(posterior, d, active, scratch);
      expect(all[i]).toBeCloseTo(simpson(lp.mean, lp.sd), 8);
    });
    // The allocation lists these predictions; the summary's rate mean averages σ over 20,000
    // posterior draws: they agree within 4 Monte-Carlo sd (Var σ(a) ≤ p(1 − p) bounds it).
    const settings = parseSettings({ samples: 20000 });
    const round = allocateSegment({ design, settings, segment: "s", segmentSpread: 0.1, posterior, rng: createRng(4), now: 0, frozen: false, active: new Map(), counters: new Map() });
    const keys = combos.map((c) => combinationKey(design, c));
    round.allocation.keys.forEach((key, i) => expect(round.allocation.predicted![i]).toBe(all[keys.indexOf(key)]));
    for (const c of round.summary.top) {
      const p = all[keys.indexOf(c.combination)];
      expect(Math.abs(c.rate.mean - p)).toBeLessThan(4 * Math.sqrt(p * (1 - p) / 20000));
    }
  });
});
