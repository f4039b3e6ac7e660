import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterEach, describe, expect, it, vi } from "vitest";
import { run as plan } from "../../src/commands/plan.ts";
import { run as simulate } from "../../src/commands/simulate.ts";

const dir = mkdtempSync(join(tmpdir(), "facetwise-sim-"));
const scenarioPath = join(dir, "small.json");
writeFileSync(
  scenarioPath,
  JSON.stringify({
    name: "small",
    factors: [
      { name: "headline", levels: ["a", "b", "c"] },
      { name: "hero", levels: ["x", "y"] },
    ],
    segments: [
      { name: "s1", share: 0.6 },
      { name: "s2", share: 0.4 },
    ],
    truth: { baseline: 0.1, main: { headline: { b: 0.4 } } },
    visitorsPerDay: 1000,
    engine: { attributionWindowHours: 1, foldIntervalSeconds: 3600 },
  }),
);

function capture(): { lines: string[]; restore: () => void } {
  const lines: string[] = [];
  const spy = vi.spyOn(console, "log").mockImplementation((...args: unknown[]) => void lines.push(args.join(" ")));
  return { lines, restore: () => spy.mockRestore() };
}

afterEach(() => vi.restoreAllMocks());

describe("facetwise simulate", () => {
  it("--json prints exactly one object with issue 4's keys, and --out writes the charts and the JSON", async () => {
    const out = capture();
    const code = await simulate([scenarioPath, "--runs", "2", "--visitors", "600", "--seed", "3", "--json", "--threads", "1", "--out", join(dir, "out")]);
    out.restore();
    expect(code).toBe(0);
    expect(out.lines).toHaveLength(1);
    const report = JSON.parse(out.lines[0]!);
    // Key set from issue 4's example object.
    expect(Object.keys(report)).toEqual(["scenario", "visitors", "runs", "seed", "mde", "fixedHorizon", "policies", "summary"]);
    expect(Object.keys(report.policies)).toEqual(["facetwise", "split", "independent"]);
    for (const p of Object.values(report.policies) as Record<string, unknown>[]) {
      expect(Object.keys(p)).toEqual(["regret", "conversions", "finalCorrect", "visitorsToSettle", "settleCorrect"]);
    }
    expect(Object.keys(report.summary)).toEqual(["savingVsSplit", "regretVsIndependent", "finalCorrect"]);
    expect(report).toMatchObject({ visitors: 600, runs: 2, seed: 3, mde: 0.1 });
    expect(report.summary.savingVsSplit).toBeCloseTo(1 - report.policies.facetwise.regret.mean / report.policies.split.regret.mean, 2); // regrets are rounded to 0.1
    expect(JSON.parse(readFileSync(join(dir, "out", "report.json"), "utf8"))).toEqual(report);
    expect(readFileSync(join(dir, "out", "regret.svg"), "utf8")).toMatch(/^<svg[\s\S]*<polyline[\s\S]*<\/svg>\n$/);
    expect(readFileSync(join(dir, "out", "best-share.svg"), "utf8")).toContain("s1");
  });

  it("--json --intervals adds every run's, segment's and combination's final interval beside the truth; the table prints their coverage", async () => {
    const out = capture();
    expect(await simulate([scenarioPath, "--runs", "2", "--visitors", "600", "--seed", "3", "--json", "--intervals", "--threads", "1"])).toBe(0);
    out.restore();
    const report = JSON.parse(out.lines[0]!);
    expect(Object.keys(report)).toEqual(["scenario", "visitors", "runs", "seed", "mde", "fixedHorizon", "policies", "summary", "intervals"]);
    // 2 runs × 2 segments × 6 combinations (DESIGN.md "Scenario files, round 2 additions").
    expect(report.intervals).toHaveLength(24);
    for (const row of report.intervals) {
      expect(Object.keys(row)).toEqual(["run", "segment", "share", "combination", "truth", "mean", "lower", "upper"]);
      expect(row.lower).toBeLessThanOrEqual(row.mean);
      expect(row.mean).toBeLessThanOrEqual(row.upper);
      // Truth by hand: baseline 0.1 everywhere, headline b shifts the log-odds by 0.4:
      // 1/(1 + 9·e^−0.4) = 0.142189.
      expect(row.truth).toBeCloseTo(row.combination.startsWith("headline=b|") ? 0.142189 : 0.1, 6);
    }
    expect(new Set(report.intervals.map((r: { run: number }) => r.run))).toEqual(new Set([0, 1]));
    expect(report.intervals.filter((r: { segment: string; share: number }) => r.segment === "s2" && r.share === 0.4)).toHaveLength(12);

    const table = capture();
    expect(await simulate([scenarioPath, "--runs", "2", "--visitors", "600", "--seed", "3", "--threads", "1"])).toBe(0);
    table.restore();
    const text = table.lines.join("\n");
    // The same seed gives the same intervals: the table's count is over those 24.
    const covered = report.intervals.filter((r: { truth: number; lower: number; upper: number }) => r.lower <= r.truth && r.truth <= r.upper).length;
    expect(text).toContain("Final 95% rate intervals");
    expect(text).toMatch(new RegExp(`all segments +${(covered / 24 * 100).toFixed(1)}% \\(.+\\) of 24`));
    expect(text).toMatch(/segments with ≤ 10.0% of traffic +— \(none\)/);
  });

  it.each([
    [[scenarioPath, "--intervals"], /--intervals: adds to the JSON report/],
    [["--runs", "2"], /give exactly one scenario file/],
    [[scenarioPath, "--runs", "0"], /--runs: expected a whole number at least 1/],
    [[scenarioPath, "--bogus"], /Unknown option '--bogus'/],
    [[scenarioPath, "--maturity", "later"], /--maturity/],
    [[join(dir, "missing.json")], /cannot read the file/],
  ])("rejects bad input with one clear error (%#)", async (argv, message) => {
    await expect(simulate(argv as string[])).rejects.toThrow(message);
  });
});

describe("facetwise plan", () => {
  it("prints the fixed-horizon days and the engine's figures with intervals", async () => {
    const out = capture();
    const code = await plan([
      "--factors", "2,2", "--segments", "2", "--baseline", "0.1", "--mde", "0.2",
      "--visitors-per-day", "1000", "--days", "0.5", "--draws", "2", "--threads", "1", "--json",
    ]);
    out.restore();
    expect(code).toBe(0);
    const report = JSON.parse(out.lines[0]!);
    expect(report.structure).toMatchObject({ levels: [2, 2], combinations: 4, segments: 2 });
    expect(report.fixedHorizonDays.median).toBeGreaterThan(0);
    expect(report.fixedHorizonDays.p10).toBeLessThanOrEqual(report.fixedHorizonDays.p90);
    expect(report.prior).toContain("N(0, 0.15²)");
  });

  it.each([
    [["--segments", "4", "--baseline", "0.035", "--mde", "0.1", "--visitors-per-day", "20000"], /--factors: is required/],
    [["--factors", "3,x", "--segments", "4", "--baseline", "0.035", "--mde", "0.1", "--visitors-per-day", "20000"], /--factors/],
    [["--factors", "3,3", "--segments", "4", "--baseline", "1.2", "--mde", "0.1", "--visitors-per-day", "20000"], /--baseline: expected a number above 0 and below 1/],
    [["--factors", "3,3", "--segments", "4", "--baseline", "0.03", "--mde", "0.1"], /--visitors-per-day: is required/],
  ])("rejects bad flags with one clear error (%#)", async (argv, message) => {
    await expect(plan(argv)).rejects.toThrow(message);
  });
});
