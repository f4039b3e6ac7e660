/**
 * The human-readable form of a simulation report (what `facetwise simulate` prints without --json),
 * with the issue-4 targets beside the headline ratios and, when given, the coverage of the
 * engine's final 95% rate intervals (intervalCoverage.ts).
 */
import { type Coverage, SMALL_SHARE } from "./intervalCoverage.ts";
import { POLICY_NAMES } from "./runSimulation.ts";
import type { SimulationReport } from "./summarize.ts";

const int = (x: number): string => Math.round(x).toLocaleString("en-US");
const pct = (x: number | null): string => (x === null ? "—" : `${(x * 100).toFixed(1)}%`);

export function formatTable(
  report: SimulationReport,
  context: {
    visitorsPerDay: number;
    combinations: number;
    seconds?: number;
    /** Share of run × segment pairs in which the engine's segment settled within the horizon. */
    settledShare?: number;
    /** Coverage of the engine's final 95% intervals, overall and in small segments. */
    coverage?: { overall: Coverage | null; small: Coverage | null };
  },
): string {
  const rows = [["policy", "regret mean (p10–p90)", "conversions", "final correct", "settled by (median)", "settle correct"]];
  for (const name of POLICY_NAMES) {
    const p = report.policies[name];
    rows.push([
      name,
      `${int(p.regret.mean)} (${int(p.regret.p10)}–${int(p.regret.p90)})`,
      int(p.conversions),
      pct(p.finalCorrect),
      p.visitorsToSettle !== null ? `${int(p.visitorsToSettle)} visitors` : p.settleCorrect === null ? "—" : "beyond horizon",
      p.settleCorrect === null || context.settledShare === undefined || name !== "facetwise"
        ? pct(p.settleCorrect)
        : `${pct(p.settleCorrect)} of ${pct(context.settledShare)} settled`,
    ]);
  }
  const widths = rows[0]!.map((_, i) => Math.max(...rows.map((r) => r[i]!.length)));
  const line = (r: string[]): string => r.map((cell, i) => (i === 0 ? cell.padEnd(widths[i]!) : cell.padStart(widths[i]!))).join("  ");
  const s = report.summary;
  const days = report.fixedHorizon.visitors / context.visitorsPerDay;
  const needsIndependent = context.combinations >= 48;
  return [
    `Scenario: ${report.scenario}`,
    `${int(report.visitors)} visitors × ${report.runs} runs, seed ${report.seed}, mde ${pct(report.mde)}, ` +
      `${int(context.combinations)} allowed combinations` +
      (context.seconds === undefined ? "" : `, ${context.seconds.toFixed(1)} s`),
    `Classic fixed-horizon split test: ${int(report.fixedHorizon.visitors)} visitors ` +
      `(${days.toFixed(days < 10 ? 1 : 0)} days at ${int(context.visitorsPerDay)}/day)`,
    "",
    line(rows[0]!),
    ...rows.slice(1).map(line),
    "",
    `saving vs split      ${pct(s.savingVsSplit).padStart(7)}   target ≥ 80%   ${s.savingVsSplit >= 0.8 ? "met" : "MISSED"}`,
    `final correct        ${pct(s.finalCorrect).padStart(7)}   target ≥ 95%   ${s.finalCorrect >= 0.95 ? "met" : "MISSED"}`,
    `regret vs independent${s.regretVsIndependent.toFixed(2).padStart(8)}   target ≤ 0.5 ` +
      (needsIndependent ? `  ${s.regretVsIndependent <= 0.5 ? "met" : "MISSED"}` : "  (applies from 48 combinations)"),
    ...(context.coverage ? coverageLines(context.coverage) : []),
  ].join("\n");
}

/** "94.8% (94.0–95.5%) of 1,440": the share of intervals holding the truth with its 95% binomial interval. */
function coverageLines(coverage: { overall: Coverage | null; small: Coverage | null }): string[] {
  const figure = (c: Coverage | null): string =>
    c === null ? "— (none)" : `${pct(c.share)} (${pct(c.lower)}–${pct(c.upper)}) of ${int(c.total)}`;
  const small = `segments with ≤ ${pct(SMALL_SHARE)} of traffic`;
  return [
    "",
    "Final 95% rate intervals of the engine that contain the true rate (nominal 95%; 95% binomial interval):",
    `  ${"all segments".padEnd(small.length)}  ${figure(coverage.overall)}`,
    `  ${small}  ${figure(coverage.small)}`,
  ];
}
