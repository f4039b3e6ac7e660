/**
 * Turns the runs' results into the report `facetwise simulate --json` prints (issue 4's shape):
 * per policy the regret (mean, p10, p90 over runs), mean conversions, finalCorrect (share of
 * run × segment pairs whose final leader is within mde of the best), visitorsToSettle (median over
 * runs of the visitor at which every segment had settled; a run that never settled counts as
 * beyond the horizon, so it is null when half or more never settled) and settleCorrect (share of
 * settled segments whose leader at that moment was within mde); then the headline ratios.
 * `intervalRows` gives the engine's final rate intervals in the shape of `--intervals`.
 */
import type { FixedHorizon } from "./fixedHorizon.ts";
import { quantile } from "./quantile.ts";
import { POLICY_NAMES, type PolicyName, type RunResult } from "./runSimulation.ts";

export interface PolicyReport {
  regret: { mean: number; p10: number; p90: number };
  conversions: number;
  finalCorrect: number;
  visitorsToSettle: number | null;
  settleCorrect: number | null;
}

export interface SimulationReport {
  scenario: string;
  visitors: number;
  runs: number;
  seed: number;
  mde: number;
  fixedHorizon: FixedHorizon;
  policies: Record<PolicyName, PolicyReport>;
  summary: { savingVsSplit: number; regretVsIndependent: number; finalCorrect: number };
}

const round = (x: number, digits: number): number => Number(x.toFixed(digits));
const mean = (xs: number[]): number => xs.reduce((a, b) => a + b, 0) / xs.length;

export function summarizePolicy(results: RunResult[], name: PolicyName): PolicyReport {
  const runs = results.map((r) => r[name]);
  const regrets = runs.map((r) => r.regret);
  const finals = runs.flatMap((r) => r.finalCorrect);
  const settle = runs.map((r) => r.visitorsToSettle ?? Infinity);
  const medianSettle = quantile(settle, 0.5);
  const settledLeaders = runs.flatMap((r) => r.settleCorrect ?? []).filter((x): x is number => x !== null);
  return {
    regret: { mean: round(mean(regrets), 1), p10: round(quantile(regrets, 0.1), 1), p90: round(quantile(regrets, 0.9), 1) },
    conversions: round(mean(runs.map((r) => r.conversions)), 1),
    finalCorrect: round(mean(finals), 4),
    visitorsToSettle: Number.isFinite(medianSettle) ? Math.round(medianSettle) : null,
    settleCorrect: settledLeaders.length > 0 ? round(mean(settledLeaders), 4) : null,
  };
}

/**
 * Share of run × segment pairs in which the policy's segment settled within the horizon (for the
 * table; not part of the --json shape). Undefined for policies without a stopping rule.
 */
export function settledShare(results: RunResult[], name: PolicyName): number | undefined {
  const settled = results.flatMap((r) => r[name].settleCorrect ?? []);
  return settled.length > 0 ? settled.filter((x) => x !== null).length / settled.length : undefined;
}

/** The `intervals` of `simulate --json --intervals`: the engine's final 95% rate intervals beside the truth. */
export interface IntervalRow {
  run: number;
  segment: string;
  share: number;
  combination: string;
  truth: number;
  mean: number;
  lower: number;
  upper: number;
}

export function intervalRows(results: RunResult[], segments: { name: string; share: number }[], keys: string[]): IntervalRow[] {
  return results.flatMap((r, run) =>
    (r.facetwise.intervals ?? []).map((i) => ({
      run,
      segment: segments[i.segment]!.name,
      share: segments[i.segment]!.share,
      combination: keys[i.combination]!,
      truth: i.truth,
      mean: i.mean,
      lower: i.lower,
      upper: i.upper,
    })),
  );
}

export function summarize(
  meta: { scenario: string; visitors: number; seed: number; mde: number; fixedHorizon: FixedHorizon },
  results: RunResult[],
): SimulationReport {
  const policies = Object.fromEntries(POLICY_NAMES.map((n) => [n, summarizePolicy(results, n)])) as Record<
    PolicyName,
    PolicyReport
  >;
  const regret = (n: PolicyName): number => mean(results.map((r) => r[n].regret));
  return {
    scenario: meta.scenario,
    visitors: meta.visitors,
    runs: results.length,
    seed: meta.seed,
    mde: meta.mde,
    fixedHorizon: meta.fixedHorizon,
    policies,
    summary: {
      savingVsSplit: round(1 - regret("facetwise") / regret("split"), 4),
      regretVsIndependent: round(regret("facetwise") / regret("independent"), 4),
      finalCorrect: policies.facetwise.finalCorrect,
    },
  };
}
