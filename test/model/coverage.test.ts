import { describe, expect, it } from "vitest";
import { combinationKey, combinationRates, createRng, foldState, initialState, parseSettings, type FoldRow, type ModelState } from "../../src/model/index.ts";
import { addCounts } from "../../src/model/counts.ts";
import { segmentData } from "../../src/model/state.ts";
import { page } from "./engineFixtures.ts";
import { coverage, describeCoverage } from "../bench/coverageExperiment.ts";

/**
 * DESIGN.md asks that a segment holding 90% of the traffic does not get overconfident intervals
 * (its data must not be counted twice: once in the pooled model and again in the segment).
 * Check: frequentist coverage of the 95% credible intervals of the true conversion rates over
 * repeated simulated experiments. With data-dominated posteriors, correctly calibrated 95%
 * intervals cover about 95% of the time (Bernstein–von Mises; e.g. van der Vaart, Asymptotic
 * Statistics, 1998, §10.2); counting the big segment's data twice would shrink its intervals by
 * √2 and drop coverage to about 83% (Φ(1.96/√2)·2 − 1), which this test would catch.
 * The truth below is invented workload, not a reference.
 */
const design = page([3, 2]);
const logit = (segment: string, c: number[]) =>
  -3 + [0, 0.3, -0.2][c[0]] + [0, 0.15][c[1]] + (c[0] === 2 && c[1] === 1 ? 0.1 : 0) + (segment === "small" ? 0.2 - 0.1 * c[1] : 0);
const rate = (segment: string, c: number[]) => 1 / (1 + Math.exp(-logit(segment, c)));
const combos = [0, 1, 2].flatMap((a) => [0, 1].map((b) => [a, b]));

function experiment(seed: number, double: boolean) {
  const settings = parseSettings({ samples: 2000 });
  const rng = createRng(seed);
  let state: ModelState = initialState(design, settings);
  for (let fold = 0; fold < 8; fold++) {
    const counts = new Map<string, FoldRow>();
    for (let v = 0; v < 5000; v++) {
      const segment = rng.next() < 0.9 ? "big" : "small";
      const c = combos[rng.int(combos.length)];
      const key = `${segment}\t${combinationKey(design, c)}`;
      const row = counts.get(key) ?? { segment, combination: combinationKey(design, c), n: 0, k: 0 };
      row.n++;
      if (rng.next() < rate(segment, c)) row.k++;
      counts.set(key, row);
    }
    state = foldState({ design, settings, state, rows: [...counts.values()], now: fold }).state;
  }
  if (double) {
    // The defect this test guards against: the big segment's information counted twice.
    const big = state.segments.get("big")!;
    const segments = new Map(state.segments).set("big", segmentData(design, addCounts(design, big.counts, 2, new Map()), big.mode, big.site.folds));
    state = foldState({ design, settings, state: { ...state, segments }, rows: [], now: 8 }).state;
  }
  const covered = { big: 0, small: 0 };
  for (const segment of ["big", "small"] as const) {
    const keys = combos.map((c) => combinationKey(design, c));
    const rates = combinationRates({ design, settings, state, segment, combinations: keys, seed });
    combos.forEach((c, i) => {
      const truth = rate(segment, c);
      if (rates[keys[i]].lower <= truth && truth <= rates[keys[i]].upper) covered[segment]++;
    });
  }
  return covered;
}

describe("calibration of a dominant segment", () => {
  it("keeps 95% intervals near 95% coverage for a segment with 90% of the traffic", () => {
    const reps = 60;
    const totals = { big: 0, small: 0, doubled: 0 };
    for (let r = 0; r < reps; r++) {
      const honest = experiment(1000 + r, false);
      totals.big += honest.big;
      totals.small += honest.small;
      totals.doubled += experiment(1000 + r, true).big;
    }
    const n = reps * combos.length;
    const coverage = { big: totals.big / n, small: totals.small / n, doubled: totals.doubled / n };
    console.log(`coverage of 95% intervals over ${n} (rep × combination): big segment ${(coverage.big * 100).toFixed(1)}%, small segment ${(coverage.small * 100).toFixed(1)}%, big with its data counted twice ${(coverage.doubled * 100).toFixed(1)}%`);
    // 360 intervals, clustered by experiment: binomial sd at 95% ≈ 1.1%; allow 90–99%.
    expect(coverage.big).toBeGreaterThan(0.9);
    expect(coverage.big).toBeLessThan(0.99);
    expect(coverage.small).toBeGreaterThan(0.85);
    // The check has teeth: the double-counting defect falls below the bar.
    expect(coverage.doubled).toBeLessThan(0.9);
  }, 300_000);
});

/**
 * The honest-numbers issue's coverage checks, at a size CI can afford (60 replications each; the
 * bench runs 200+: `npm run bench:coverage`). Workloads and sources in
 * test/bench/coverageExperiment.ts: truths drawn from the engine's prior (Cook, Gelman & Rubin
 * 2006: a correct posterior covers 95% on average over its prior), four segments with 90/5/3/2% of
 * the traffic, and interactions of 1–1.5 log-odds. Bars: 93–97% for the first two, as the issue
 * asks, widened by the replication-clustered 95% interval at this size (about ±1.5 points) to
 * 91–98.5%; ≥ 90% for the large interactions (62–68% before the prior scales were learned).
 */
describe("coverage of the 95% intervals", () => {
  for (const [workload, low, high] of [["prior", 0.91, 0.985], ["shares", 0.91, 0.985], ["interactions", 0.9, 0.99]] as const) {
    it(`stays honest on ${workload} truths`, () => {
      const c = coverage(workload, 60, 500);
      console.log(describeCoverage(c));
      expect(c.all.covered / c.all.total).toBeGreaterThan(low);
      expect(c.all.covered / c.all.total).toBeLessThan(high);
      if (c.small.total > 0) expect(c.small.covered / c.small.total).toBeGreaterThan(low);
    }, 300_000);
  }
});
