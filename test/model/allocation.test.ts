import { describe, expect, it } from "vitest";
import { combinationKey, createRng, foldCycle, initialState, parseSettings, pickFrom, predictedOf, propensityOf } from "../../src/model/index.ts";
import { allocateSegment } from "../../src/model/allocateSegment.ts";
import { mixAllocation } from "../../src/model/allocation.ts";
import { factorSpd } from "../../src/model/linalg.ts";
import { jStat, page } from "./engineFixtures.ts";

/** A Gaussian posterior on θ = [b0, b1] that makes the two logits b0 and b0+b1 independent. */
function twoArmPosterior(m0: number, s0: number, m1: number, s1: number) {
  // Cov(b0) = s0², Cov(b1) = s0² + s1², Cov(b0, b1) = −s0²  ⇒  logits independent N(m0, s0²), N(m1, s1²).
  const a = s0 * s0, b = -s0 * s0, c = s0 * s0 + s1 * s1;
  const det = a * c - b * b;
  const precision = Float64Array.from([c / det, -b / det, -b / det, a / det]);
  return { precision, mean: Float64Array.from([m0, m1 - m0]), chol: factorSpd(precision.slice(), 2, "test") };
}

describe("Thompson allocation", () => {
  it("matches probability matching Φ(Δ/√(σ₁²+σ₂²)) for two independent Gaussian arms (thompsonScale 1)", () => {
    // P(X1 > X0) for independent normals = Φ((m1−m0)/√(s0²+s1²)) (difference of normals);
    // reference values from jStat.normal.cdf. Monte-Carlo sd with M = 20,000 is ≤ 0.0036.
    const design = page([2]);
    const settings = parseSettings({ samples: 20000, baselineShare: 0, explorationFloor: 0, thompsonScale: 1 });
    const cases: [number, number, number, number][] = [[-3, 0.2, -2.9, 0.3], [-3, 0.1, -3.2, 0.15], [-2, 0.5, -2, 0.5]];
    cases.forEach(([m0, s0, m1, s1], i) => {
      const round = allocateSegment({ design, settings, segment: "s", segmentSpread: 0.1, posterior: twoArmPosterior(m0, s0, m1, s1), rng: createRng(100 + i), now: 0, frozen: false, active: new Map(), counters: new Map() });
      const expected = jStat.normal.cdf((m1 - m0) / Math.sqrt(s0 * s0 + s1 * s1), 0, 1);
      const key1 = combinationKey(design, [1]);
      expect(Math.abs(propensityOf(round.allocation, key1) - expected)).toBeLessThan(4 * 0.0036);
    });
  });

  it("tempers the Thompson share to Φ(Δ/(α√(σ₁²+σ₂²))) while reporting the untempered probability of being best", () => {
    // Draws from N(μ, α²Σ) (Chapelle & Li, "An Empirical Evaluation of Thompson Sampling", NIPS
    // 2011, §4 — scaling the posterior's spread; cited from memory): for two independent Gaussian
    // arms P(X1 > X0) becomes Φ((m1−m0)/(α√(s0²+s1²))). The report keeps α = 1. Reference values
    // from jStat.normal.cdf; Monte-Carlo sd with M = 20,000 is ≤ 0.0036.
    const design = page([2]);
    const key1 = combinationKey(design, [1]);
    const [m0, s0, m1, s1] = [-3, 0.2, -2.9, 0.3];
    const spread = Math.sqrt(s0 * s0 + s1 * s1);
    for (const [alpha, seed] of [[0.5, 7], [0.25, 8]]) {
      const settings = parseSettings({ samples: 20000, baselineShare: 0, explorationFloor: 0, thompsonScale: alpha });
      const round = allocateSegment({ design, settings, segment: "s", segmentSpread: 0.1, posterior: twoArmPosterior(m0, s0, m1, s1), rng: createRng(seed), now: 0, frozen: false, active: new Map(), counters: new Map() });
      expect(Math.abs(propensityOf(round.allocation, key1) - jStat.normal.cdf((m1 - m0) / (alpha * spread), 0, 1))).toBeLessThan(4 * 0.0036);
      const reported = round.summary.top.find((c) => c.combination === key1)!.probabilityBest;
      expect(Math.abs(reported - jStat.normal.cdf((m1 - m0) / spread, 0, 1))).toBeLessThan(4 * 0.0036);
    }
  });

  it("mixes the baseline share and the exploration floor with known weights", () => {
    // π(c) = b·[baseline] + (1−b)·((1−e)·TS(c) + e/|eligible|) — the mixture definition (DESIGN.md).
    const design = page([3]);
    // thompsonScale 1: the Thompson share is then the reported probability of being best.
    const settings = parseSettings({ samples: 4000, baselineShare: 0.1, explorationFloor: 0.2, thompsonScale: 1 });
    const posterior = { precision: Float64Array.from([25, 0, 0, 0, 25, 0, 0, 0, 25]), mean: Float64Array.from([-3, 0.3, 0.1]) };
    const round = allocateSegment({ design, settings, segment: "s", segmentSpread: 0.1, posterior: { ...posterior, chol: factorSpd(posterior.precision.slice(), 3, "test") }, rng: createRng(3), now: 0, frozen: false, active: new Map(), counters: new Map() });
    const ts = new Map(round.summary.top.map((c) => [c.combination, c.probabilityBest]));
    let total = 0;
    for (let l = 0; l < 3; l++) {
      const key = combinationKey(design, [l]);
      const expected = (l === 0 ? 0.1 : 0) + 0.9 * (0.8 * (ts.get(key) ?? 0) + 0.2 / 3);
      expect(propensityOf(round.allocation, key)).toBeCloseTo(expected, 12);
      total += propensityOf(round.allocation, key);
    }
    expect(total).toBeCloseTo(1, 12);
  });

  it("serves a settled segment's leader with everything but the floor and the baseline share", () => {
    // DESIGN.md "Settled": a settled segment stops exploring and keeps only the exploration floor.
    // l1 and l2 tie (sd 0.005 in log-odds each), so each is best in about half the draws, but the
    // expected loss of stopping on either is far below 1% of its rate: settled by loss. Plain
    // Thompson sampling would split the traffic between them.
    const design = page([3]);
    const settings = parseSettings({ samples: 2000, baselineShare: 0.1, explorationFloor: 0.2 });
    const precision = Float64Array.from([40000, 0, 0, 0, 40000, 0, 0, 0, 40000]);
    const posterior = { precision, mean: Float64Array.from([-3, 1.3, 1.3]), chol: factorSpd(precision.slice(), 3, "test") };
    const round = allocateSegment({ design, settings, segment: "s", segmentSpread: 0.1, posterior, rng: createRng(5), now: 0, frozen: false, active: new Map(), counters: new Map() });
    expect(round.summary.settledBy).toBe("loss");
    expect(round.summary.leader.probabilityBest).toBeLessThan(0.7);
    const leader = round.summary.leader.combination;
    const other = [1, 2].map((l) => combinationKey(design, [l])).find((k) => k !== leader)!;
    const floor = (0.9 * 0.2) / 3;
    expect(propensityOf(round.allocation, leader)).toBeCloseTo(0.9 * 0.8 + floor, 12);
    expect(propensityOf(round.allocation, other)).toBeCloseTo(floor, 12);
    expect(propensityOf(round.allocation, combinationKey(design, [0]))).toBeCloseTo(0.1 + floor, 12);
  });

  it("agrees with Beta posteriors (jStat) for two combinations with plenty of data and a flat prior", () => {
    // Under a flat prior, the rate of k of n is Beta(k+1, n−k+1); P(p1 > p0) = ∫ f1(x) F0(x) dx
    // (numerical integration of jStat's Beta pdf and cdf). The engine works on the logit scale with
    // a Laplace approximation, so it agrees to Monte-Carlo error plus a small approximation error.
    const design = page([2]);
    const settings = parseSettings({ samples: 20000, priorInterceptScale: 20, priorMainScale: 20, segmentSpread: 0.01, baselineShare: 0, explorationFloor: 0 });
    const data = [[4000, 120], [4000, 150]];
    const rows = data.map(([n, k], l) => ({ segment: "s", combination: combinationKey(design, [l]), n, k }));
    const out = foldCycle({ design, settings, state: initialState(design, settings), rows, now: 0, segments: ["s"], retired: [], seed: 11 });
    const summary = out.summaries.s;
    const [a0, b0] = [data[0][1] + 1, data[0][0] - data[0][1] + 1];
    const [a1, b1] = [data[1][1] + 1, data[1][0] - data[1][1] + 1];
    let pBetter = 0;
    const steps = 20000;
    for (let i = 0; i < steps; i++) {
      const x = (i + 0.5) / steps * 0.1; // all mass lies below 0.1
      pBetter += jStat.beta.pdf(x, a1, b1) * jStat.beta.cdf(x, a0, b0) * (0.1 / steps);
    }
    const key1 = combinationKey(design, [1]);
    const engine = summary.top.find((c) => c.combination === key1)!;
    expect(Math.abs(engine.probabilityBest - pBetter)).toBeLessThan(0.015);
    // 95% equal-tailed intervals of each rate vs Beta quantiles (jStat.beta.inv), within 2% relative.
    const key0 = combinationKey(design, [0]);
    const engine0 = summary.top.find((c) => c.combination === key0)!;
    for (const [c, a, b] of [[engine0, a0, b0], [engine, a1, b1]] as const) {
      expect(Math.abs(c.rate.lower / jStat.beta.inv(0.025, a, b) - 1)).toBeLessThan(0.02);
      expect(Math.abs(c.rate.upper / jStat.beta.inv(0.975, a, b) - 1)).toBeLessThan(0.02);
      expect(Math.abs(c.rate.mean / (a / (a + b)) - 1)).toBeLessThan(0.01);
    }
  });

  it("freezes to the leader with propensity 1", () => {
    const design = page([3, 2]);
    const settings = parseSettings({});
    const rows = [{ segment: "s", combination: combinationKey(design, [2, 1]), n: 5000, k: 400 }, { segment: "s", combination: combinationKey(design, [0, 0]), n: 5000, k: 100 }];
    const out = foldCycle({ design, settings, state: initialState(design, settings), rows, now: 0, segments: ["s"], retired: [], seed: 1, frozen: true });
    const a = out.allocations.s;
    expect(a.keys).toEqual([out.summaries.s.leader.combination]);
    const leader = out.summaries.s.leader;
    const drawn = pickFrom(a, createRng(1));
    expect(drawn).toMatchObject({ combination: leader.combination, propensity: 1 });
    // Its predicted rate is the posterior mean rate; the summary's is the same mean over 1,000 draws.
    expect(Math.abs(drawn.predicted! - leader.rate.mean)).toBeLessThan(4 * Math.sqrt(leader.rate.mean * (1 - leader.rate.mean) / settings.samples));
  });
});

describe("alias draws", () => {
  it("reproduce the allocation's propensities (chi-square goodness of fit)", () => {
    // Pearson's X² with k−1 degrees of freedom (Pearson 1900); critical value at α = 0.001 from jStat.
    const keys = Array.from({ length: 12 }, (_, i) => `f0=l${i}`);
    const weights = keys.map((_, i) => (i + 1) ** 2);
    const total = weights.reduce((a, b) => a + b, 0);
    const predicted = keys.map((_, i) => i / 100);
    const allocation = mixAllocation({ segment: "s", keys, predicted, thompson: weights.map((w) => w / total), eligible: keys.map(() => 1), baselineKey: keys[0], baselinePredicted: 0, baselineShare: 0.05, explorationFloor: 0.1 });
    const rng = createRng(5);
    const counts = new Map<string, number>();
    const draws = 200_000;
    let mismatched = 0;
    for (let i = 0; i < draws; i++) {
      const pick = pickFrom(allocation, rng);
      if (pick.propensity !== propensityOf(allocation, pick.combination)) mismatched++;
      if (pick.predicted !== predicted[keys.indexOf(pick.combination)]) mismatched++; // each pick carries its own combination's prediction
      counts.set(pick.combination, (counts.get(pick.combination) ?? 0) + 1);
    }
    expect(mismatched).toBe(0);
    let x2 = 0;
    for (const key of keys) {
      const expected = draws * propensityOf(allocation, key);
      x2 += ((counts.get(key) ?? 0) - expected) ** 2 / expected;
    }
    expect(x2).toBeLessThan(jStat.chisquare.inv(0.999, keys.length - 1));
  });

  it("draw the uniform share of a huge space by rejection with exact propensities", () => {
    // 13 binary factors = 8,192 combinations (above the 4,096 listing limit), one rule excluding 2,048.
    const design = page(Array(13).fill(2), { interactions: [], exclude: [{ f0: "l1", f1: "l1" }] });
    expect(design.enumerable).toBe(false);
    const settings = parseSettings({ explorationFloor: 0.3, baselineShare: 0.1, samples: 500 });
    const rows = [{ segment: "s", combination: combinationKey(design, Array(13).fill(1).map((x, f) => (f < 2 ? 0 : x))), n: 3000, k: 300 }];
    const out = foldCycle({ design, settings, state: initialState(design, settings), rows, now: 0, segments: ["s"], retired: [], seed: 2 });
    const allocation = out.allocations.s;
    expect(allocation.uniform?.eligibleCount).toBe(6144);
    const rng = createRng(9);
    const listed = new Map<string, number>();
    let other = 0;
    const draws = 100_000;
    let mismatched = 0;
    let excluded = 0;
    for (let i = 0; i < draws; i++) {
      const pick = pickFrom(allocation, rng);
      if (Math.abs(pick.propensity - propensityOf(allocation, pick.combination)) > 1e-15) mismatched++;
      if (pick.combination.startsWith("f0=l1|f1=l1|")) excluded++; // never an excluded combination
      if (pick.predicted !== predictedOf(allocation, pick.combination)) mismatched++; // listed: its own; drawn uniformly: none
      if (allocation.keys.includes(pick.combination)) listed.set(pick.combination, (listed.get(pick.combination) ?? 0) + 1);
      else other++;
    }
    expect(mismatched).toBe(0);
    expect(excluded).toBe(0);
    // Chi-square over the listed combinations plus one bucket for all others (Pearson 1900; jStat critical value).
    let x2 = 0;
    let otherMass = 1;
    for (const [i, key] of allocation.keys.entries()) {
      const p = allocation.propensities[i];
      otherMass -= p;
      x2 += ((listed.get(key) ?? 0) - draws * p) ** 2 / (draws * p);
    }
    x2 += (other - draws * otherMass) ** 2 / (draws * otherMass);
    expect(x2).toBeLessThan(jStat.chisquare.inv(0.999, allocation.keys.length));
    // Unlisted combinations have the uniform share only: (1−b)·e / |eligible|.
    expect(propensityOf(allocation, combinationKey(design, Array(13).fill(0).map((_, f) => (f === 5 ? 1 : 0))))).toBeGreaterThan(0);
    expect(propensityOf(allocation, combinationKey(design, [1, 1, ...Array(11).fill(0)]))).toBe(0);
  });
});
