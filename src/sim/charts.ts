/**
 * The two charts `facetwise simulate --out DIR` writes: cumulative regret over visitors per policy
 * (mean over runs, p10–p90 band), and the share of each segment's traffic served its true best
 * combination over time (mean over runs; facetwise solid, independent dashed; a split test's
 * share is 1/K throughout).
 */
import { quantile } from "./quantile.ts";
import { POLICY_NAMES, type RunResult } from "./runSimulation.ts";
import { svgLineChart, type Series } from "./svgChart.ts";

const POLICY_COLOURS = { facetwise: "#1f6fd1", split: "#c0392b", independent: "#7f8c8d" } as const;
const SEGMENT_COLOURS = ["#1f6fd1", "#e67e22", "#27ae60", "#8e44ad", "#c0392b", "#16a085", "#d35400", "#2c3e50"];

function xAt(visitors: number, points: number, b: number): number {
  return Math.round(((b + 1) * visitors) / points);
}

export function regretChart(results: RunResult[], visitors: number, scenario: string): string {
  const series: Series[] = POLICY_NAMES.map((name) => {
    const points = results[0]![name].curve.length;
    const at = (b: number): number[] => results.map((r) => r[name].curve[b]!);
    const xs = Array.from({ length: points }, (_, b) => b);
    return {
      name,
      colour: POLICY_COLOURS[name],
      points: [[0, 0], ...xs.map((b): [number, number] => [xAt(visitors, points, b), at(b).reduce((a, v) => a + v, 0) / results.length])],
      band: [[0, 0, 0], ...xs.map((b): [number, number, number] => [xAt(visitors, points, b), quantile(at(b), 0.1), quantile(at(b), 0.9)])],
    };
  });
  return svgLineChart({
    title: `Cumulative regret, mean and p10–p90 over ${results.length} runs`,
    subtitle: scenario,
    xLabel: "visitors",
    yLabel: "cumulative regret (conversions lost)",
    series,
  });
}

export function bestShareChart(
  results: RunResult[],
  visitors: number,
  segmentNames: string[],
  combinationCount: number,
  scenario: string,
): string {
  const series: Series[] = [];
  const shown = segmentNames.slice(0, SEGMENT_COLOURS.length);
  for (const name of ["facetwise", "independent"] as const) {
    shown.forEach((segment, s) => {
      const points = results[0]![name].bestShare[s]!.length;
      series.push({
        name: `${name === "facetwise" ? "" : "indep. "}${segment}`,
        colour: SEGMENT_COLOURS[s]!,
        dashed: name === "independent",
        points: Array.from({ length: points }, (_, b): [number, number] => [
          xAt(visitors, points, b),
          results.reduce((a, r) => a + r[name].bestShare[s]![b]!, 0) / results.length,
        ]),
      });
    });
  }
  series.push({ name: `split (1/${combinationCount})`, colour: "#999999", dashed: true, points: [[0, 1 / combinationCount], [visitors, 1 / combinationCount]] });
  return svgLineChart({
    title: "Share of each segment's traffic on its true best page",
    subtitle: scenario,
    xLabel: "visitors",
    yLabel: "share served the true best",
    series,
    yMin: 0,
    yMax: 1,
  });
}
