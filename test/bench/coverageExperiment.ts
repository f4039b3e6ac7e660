/**
 * Frequentist coverage of the engine's 95% credible intervals of conversion rates, by simulation:
 * draw a truth, simulate visitors in folds, fold them through the engine (foldState), and count how
 * often each segment's interval for each combination (combinationRates, the figure the report shows)
 * holds the true rate. Three workloads (the honest-numbers checks):
 *   - "prior": truths drawn from the engine's own prior (β ~ N(μ0, P0⁻¹), δ_s ~ N(0, T)); a Bayesian
 *     model whose prior is the truth's distribution covers 95% on average over that distribution
 *     (Cook, Gelman & Rubin, "Validation of software for Bayesian models using posterior quantiles",
 *     J. Comp. Graph. Stat. 15, 2006), up to the Laplace approximation and the learned τ;
 *   - "shares": the same, with four segments holding 90/5/3/2% of the traffic (small segments
 *     borrow from the pooled model and must stay honest);
 *   - "interactions": pairwise interactions of 1–1.5 in log-odds, ten times the interaction prior's
 *     scale, at 5,000 visitors per combination.
 * Coverage is reported with the Wilson score interval of the proportion (Wilson, JASA 22, 1927),
 * which treats every interval as independent, and with a cluster interval that treats each
 * replication as one cluster (intervals of one replication share its truth and data): the honest one.
 * Truths are made-up workloads, not references.
 */
import { allowedCombinations, combinationKey, combinationRates, createRng, foldState, initialState, parseSettings, type FoldRow, type ModelState, type PageSettings, type Rng } from "../../src/model/index.ts";
import type { Design } from "../../src/model/design.ts";
import { featureVector } from "../../src/model/design.ts";
import { page } from "../model/engineFixtures.ts";

export type Workload = "prior" | "shares" | "interactions";

/** Intervals that held the truth, of all intervals, in total and per replication. */
export interface Tally {
  covered: number;
  total: number;
  perReplication: [number, number][];
}

export interface Coverage {
  workload: Workload;
  /** Intervals that held the truth, of all intervals, by segment group. */
  all: Tally;
  small: Tally;
  /** Mean signed error of the posterior-mean rate, in units of the interval half-width (optimism check). */
  meanError: number;
}

const design: Design = page([3, 2, 2]);
const combos = allowedCombinations(design);
const keys = combos.map((c) => combinationKey(design, c));
const x = combos.map((c) => featureVector(design, c));
const d = design.dimension;
const sigmoid = (t: number) => 1 / (1 + Math.exp(-t));

interface Truth {
  segments: { name: string; share: number }[];
  /** logit of segment s, combination c. */
  logit: number[][];
  visitors: number;
  folds: number;
}

function truthFor(workload: Workload, settings: PageSettings, rng: Rng): Truth {
  const firstPair = design.pairBase[0];
  if (workload === "prior" || workload === "shares") {
    const segments = workload === "prior"
      ? [{ name: "a", share: 0.5 }, { name: "b", share: 0.3 }, { name: "c", share: 0.2 }]
      : [{ name: "big", share: 0.9 }, { name: "s5", share: 0.05 }, { name: "s3", share: 0.03 }, { name: "s2", share: 0.02 }];
    const beta = Array.from({ length: d }, (_, i) =>
      i === 0 ? settings.priorInterceptMean + settings.priorInterceptScale * rng.normal()
        : (i < firstPair ? settings.priorMainScale : settings.priorInteractionScale) * rng.normal());
    const logit = segments.map(() => {
      const theta = beta.map((b, i) => b + (i === 0 ? settings.segmentInterceptSpread : settings.segmentSpread) * rng.normal());
      return x.map((xc) => xc.reduce((s, v, i) => s + v * theta[i], 0));
    });
    return { segments, logit, visitors: workload === "prior" ? 20_000 : 40_000, folds: 20 };
  }
  const segments = [{ name: "a", share: 0.6 }, { name: "b", share: 0.4 }];
  const sign = () => (rng.next() < 0.5 ? -1 : 1);
  const pairs = [sign() * (1 + 0.5 * rng.next()), sign() * (1 + 0.5 * rng.next()), sign() * (1 + 0.5 * rng.next())];
  const base = (c: number[]) => -2.5 + [0, 0.3, -0.2][c[0]] + 0.2 * c[1] - 0.1 * c[2] + (c[0] === 1 && c[1] === 1 ? pairs[0] : 0) + (c[1] === 1 && c[2] === 1 ? pairs[1] : 0) + (c[0] === 2 && c[2] === 1 ? pairs[2] : 0);
  const logit = segments.map((_, s) => combos.map((c) => base(c) + (s === 1 ? 0.2 : 0)));
  return { segments, logit, visitors: 5000 * combos.length * 2, folds: 20 };
}

/** One replication: the truth, the engine's state after the last fold, and its intervals. */
function replicate(workload: Workload, seed: number): Coverage {
  const settings = parseSettings({ samples: 400 });
  const rng = createRng(seed);
  const truth = truthFor(workload, settings, rng);
  let state: ModelState = initialState(design, settings);
  const perFold = truth.visitors / truth.folds;
  for (let f = 0; f < truth.folds; f++) {
    const rows: FoldRow[] = [];
    truth.segments.forEach((segment, s) => {
      // Uniform allocation: coverage is a property of the posterior, not of the policy.
      const n = Math.round((perFold * segment.share) / combos.length);
      combos.forEach((_, c) => {
        const p = sigmoid(truth.logit[s][c]);
        let k = 0;
        for (let v = 0; v < n; v++) if (rng.next() < p) k++;
        rows.push({ segment: segment.name, combination: keys[c], n, k });
      });
    });
    state = foldState({ design, settings, state, rows, now: f }).state;
  }
  const result: Coverage = { workload, all: tally(), small: tally(), meanError: 0 };
  let errors = 0;
  truth.segments.forEach((segment, s) => {
    const rates = combinationRates({ design, settings, state, segment: segment.name, combinations: keys, seed });
    keys.forEach((key, c) => {
      const p = sigmoid(truth.logit[s][c]);
      const { mean, lower, upper } = rates[key];
      const hit = lower <= p && p <= upper ? 1 : 0;
      result.all.covered += hit;
      result.all.total++;
      if (segment.share <= 0.1) {
        result.small.covered += hit;
        result.small.total++;
      }
      result.meanError += (mean - p) / Math.max(1e-12, (upper - lower) / 2);
      errors++;
    });
  });
  result.meanError /= errors;
  return result;
}

const tally = (): Tally => ({ covered: 0, total: 0, perReplication: [] });

export function coverage(workload: Workload, replications: number, firstSeed = 1): Coverage {
  const total: Coverage = { workload, all: tally(), small: tally(), meanError: 0 };
  for (let r = 0; r < replications; r++) {
    const one = replicate(workload, firstSeed + r);
    for (const part of ["all", "small"] as const) {
      total[part].covered += one[part].covered;
      total[part].total += one[part].total;
      if (one[part].total > 0) total[part].perReplication.push([one[part].covered, one[part].total]);
    }
    total.meanError += one.meanError / replications;
  }
  return total;
}

/**
 * 95% interval of the coverage with replications as clusters (the intervals of one replication
 * share its truth and data): ratio estimator p = Σc/Σn with the linearised variance
 * R/(R−1)·Σ(c_r − p·n_r)²/(Σn)² (Cochran, Sampling Techniques, 3rd ed. 1977, §6.9).
 */
export function clusteredInterval(t: Tally): [number, number] {
  const p = t.covered / t.total;
  const r = t.perReplication.length;
  let ss = 0;
  for (const [c, n] of t.perReplication) ss += (c - p * n) ** 2;
  const se = Math.sqrt((r / Math.max(1, r - 1)) * ss) / t.total;
  return [p - 1.96 * se, p + 1.96 * se];
}

/** Wilson score 95% interval of a proportion (Wilson, JASA 22, 1927). */
export function wilson(covered: number, total: number): [number, number] {
  const z = 1.959963984540054;
  const p = covered / total;
  const centre = (p + (z * z) / (2 * total)) / (1 + (z * z) / total);
  const half = (z / (1 + (z * z) / total)) * Math.sqrt((p * (1 - p)) / total + (z * z) / (4 * total * total));
  return [centre - half, centre + half];
}

export function describeCoverage(c: Coverage): string {
  const part = (label: string, x: Tally) => {
    if (x.total === 0) return "";
    const [lo, hi] = wilson(x.covered, x.total);
    const [clo, chi] = clusteredInterval(x);
    return `${label} ${((100 * x.covered) / x.total).toFixed(1)}% of ${x.total} (binomial 95% CI ${(100 * lo).toFixed(1)}–${(100 * hi).toFixed(1)}%, by replication ${(100 * clo).toFixed(1)}–${(100 * chi).toFixed(1)}%)`;
  };
  return [`${c.workload}:`, part("all", c.all), part("segments ≤ 10% of traffic", c.small), `mean error ${c.meanError.toFixed(3)} half-widths`].filter(Boolean).join("  ");
}
