/**
 * `facetwise plan` without a scenario file: draws R truths of the page's structure from the plan
 * prior (planPrior.ts), runs the engine and a split test on each (one run per truth, in parallel),
 * and reports with p10–p90 intervals over the draws: the classic fixed-horizon test's days
 * (fixedHorizon.ts on each drawn truth), the engine's days until every segment settled (a draw
 * that did not settle within the horizon counts as beyond it), whether the settled leaders were
 * within mde of the best, and the engine's regret next to the split test's over the horizon.
 */
import { fixedHorizon } from "./fixedHorizon.ts";
import { runHarness, runSeed } from "./harness.ts";
import { drawPlanScenario, PLAN_PRIOR, type PlanStructure } from "./planPrior.ts";
import { quantile } from "./quantile.ts";
import { setup } from "./setup.ts";

export interface Interval {
  median: number | null;
  p10: number | null;
  p90: number | null;
}

export interface PlanReport {
  structure: { levels: number[]; combinations: number; segments: number; baseline: number; mde: number; visitorsPerDay: number };
  horizonDays: number;
  draws: number;
  seed: number;
  prior: string;
  fixedHorizonDays: Interval;
  engine: {
    daysToSettle: Interval;
    settledWithinHorizon: number;
    settleCorrect: number | null;
    regret: Interval;
    splitRegret: Interval;
    savingVsSplit: number;
  };
}

const finite = (x: number): number | null => (Number.isFinite(x) ? Number(x.toFixed(2)) : null);
const interval = (xs: number[]): Interval => ({
  median: finite(quantile(xs, 0.5)),
  p10: finite(quantile(xs, 0.1)),
  p90: finite(quantile(xs, 0.9)),
});

export async function plan(
  structure: Omit<PlanStructure, "visitors"> & { horizonDays: number },
  options: { draws: number; seed: number; threads?: number; onProgress?: (done: number) => void },
): Promise<PlanReport> {
  const visitors = Math.round(structure.horizonDays * structure.visitorsPerDay);
  const scenarios = Array.from({ length: options.draws }, (_, d) =>
    drawPlanScenario({ ...structure, visitors }, runSeed(options.seed, d)),
  );
  const prepared = scenarios.map((s) => setup(s));
  const fixedDays = prepared.map(
    (p) =>
      fixedHorizon(Array.from(p.table.phases[0]!.best), p.scenario.segments.map((s) => s.share), p.keys.length, structure.mde)
        .visitors / structure.visitorsPerDay,
  );
  const results = await runHarness(
    scenarios.map((scenario, d) => ({ scenario, seed: runSeed(options.seed, d) })),
    {
      visitors,
      maturity: "server",
      points: 10,
      policies: ["facetwise", "split"],
      ...(options.threads === undefined ? {} : { threads: options.threads }),
      ...(options.onProgress === undefined ? {} : { onProgress: options.onProgress }),
    },
  );
  const settleDays = results.map((r) => (r.facetwise.visitorsToSettle ?? Infinity) / structure.visitorsPerDay);
  const settled = results.flatMap((r) => (r.facetwise.settleCorrect ?? []).filter((x): x is number => x !== null));
  const regret = results.map((r) => r.facetwise.regret);
  const splitRegret = results.map((r) => r.split.regret);
  const sum = (xs: number[]): number => xs.reduce((a, b) => a + b, 0);
  return {
    structure: {
      levels: structure.levels,
      combinations: prepared[0]!.keys.length,
      segments: structure.segments,
      baseline: structure.baseline,
      mde: structure.mde,
      visitorsPerDay: structure.visitorsPerDay,
    },
    horizonDays: structure.horizonDays,
    draws: options.draws,
    seed: options.seed,
    prior:
      `log-odds effects drawn per truth: main ~ N(0, ${PLAN_PRIOR.main}²), pairs ~ N(0, ${PLAN_PRIOR.pair}²), ` +
      `segment shifts ~ N(0, ${PLAN_PRIOR.segmentShift}²), segment main deviations ~ N(0, ${PLAN_PRIOR.segmentMain}²); equal segment shares`,
    fixedHorizonDays: interval(fixedDays),
    engine: {
      daysToSettle: interval(settleDays),
      settledWithinHorizon: Number((settleDays.filter(Number.isFinite).length / settleDays.length).toFixed(4)),
      settleCorrect: settled.length > 0 ? Number((sum(settled) / settled.length).toFixed(4)) : null,
      regret: interval(regret),
      splitRegret: interval(splitRegret),
      savingVsSplit: Number((1 - sum(regret) / sum(splitRegret)).toFixed(4)),
    },
  };
}
