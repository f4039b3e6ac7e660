import { describe, expect, it } from "vitest";
import { formatTable } from "../../src/sim/reportTable.ts";
import type { PolicyReport, SimulationReport } from "../../src/sim/summarize.ts";

const policy = (over: Partial<PolicyReport>): PolicyReport => ({
  regret: { mean: 800, p10: 700, p90: 900 }, conversions: 13000, finalCorrect: 1, visitorsToSettle: null, settleCorrect: null, ...over,
});

describe("simulation table", () => {
  it("says when segments settled only partly, instead of a bare dash beside 100%", () => {
    // Our own output format: the median run never had every segment settled (beyond the horizon),
    // yet the segments that did settle were right — the table must say how many those were.
    const report: SimulationReport = {
      scenario: "t", visitors: 1000, runs: 2, seed: 1, mde: 0.1,
      fixedHorizon: { visitors: 5000, method: "m" },
      policies: { facetwise: policy({ settleCorrect: 1 }), split: policy({}), independent: policy({}) },
      summary: { savingVsSplit: 0.8, regretVsIndependent: 0.3, finalCorrect: 1 },
    };
    const lines = formatTable(report, { visitorsPerDay: 1000, combinations: 72, settledShare: 0.25 }).split("\n");
    const row = (name: string) => lines.find((l) => l.startsWith(name))!;
    expect(row("facetwise")).toMatch(/beyond horizon\s+100\.0% of 25\.0% settled$/);
    expect(row("split")).toMatch(/—\s+—$/);
  });
});
