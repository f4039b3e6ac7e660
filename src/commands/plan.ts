/**
 * `facetwise plan`: how long a classic split test would take for a page of this structure, and
 * what the engine is expected to need instead, from simulations on randomly drawn truths (src/sim).
 */
import { parseArgs } from "node:util";
import { fail } from "../errors.ts";
import { numberFlag, parseFlags } from "../sim/cliOptions.ts";
import { plan, type Interval, type PlanReport } from "../sim/planner.ts";
import { progressBar } from "../sim/progressBar.ts";

export const summary = "estimate test length: classic split test vs the engine, for a page's structure";

export const help = `Usage: facetwise plan --factors 3,3,2,2,2 --segments 4 --baseline 0.035 --mde 0.1 --visitors-per-day 20000 [options]

Draws random truths with this structure (main effects ~ N(0, 0.15²), pairs ~ N(0, 0.08²), segment
shifts ~ N(0, 0.3²), segment deviations ~ N(0, 0.05²), all log-odds; equal segment shares), runs the
engine and a split test on each, and reports the classic fixed-horizon days next to the engine's
days to settle and regret, as median and p10–p90 over the draws.

Required:
  --factors L,L,…        levels per factor (each ≥ 2), e.g. 3,3,2,2,2
  --segments S           number of segments (traffic sources) to optimise separately
  --baseline P           conversion rate of the current page (0 < P < 1)
  --mde M                relative minimum detectable effect (0 < M < 1), e.g. 0.1 for 10%
  --visitors-per-day V   traffic to the page

Options:
  --days D               simulated horizon in days (default 10)
  --draws R              random truths to simulate (default 8)
  --seed S               seed (default 1)
  --threads T            worker threads (default: the machine's cores)
  --json                 print one JSON object instead of the table`;

function levelsFlag(value: string | undefined): number[] {
  if (value === undefined) throw fail("INVALID_OPTION", { option: "--factors", reason: "is required, e.g. --factors 3,3,2,2,2" });
  const levels = value.split(",").map((x) => Number(x.trim()));
  if (levels.length === 0 || levels.some((n) => !Number.isInteger(n) || n < 2 || n > 50)) {
    throw fail("INVALID_OPTION", {
      option: "--factors",
      reason: `expected comma-separated level counts, each a whole number from 2 to 50, got "${value}"`,
    });
  }
  if (levels.length > 12) throw fail("INVALID_OPTION", { option: "--factors", reason: "at most 12 factors" });
  return levels;
}

function required(flag: string, value: string | undefined): string {
  if (value === undefined) throw fail("INVALID_OPTION", { option: `--${flag}`, reason: "is required (see facetwise plan --help)" });
  return value;
}

const show = (i: Interval, unit: string, digits = 1): string =>
  i.median === null
    ? `beyond the horizon`
    : `${i.median.toFixed(digits)} ${unit} (p10–p90 ${i.p10?.toFixed(digits) ?? "?"}–${i.p90 === null ? "beyond the horizon" : i.p90.toFixed(digits)})`;

export function formatPlan(r: PlanReport): string {
  const e = r.engine;
  return [
    `Page: factors ${r.structure.levels.join("×")} = ${r.structure.combinations} combinations, ${r.structure.segments} segments, ` +
      `baseline ${(r.structure.baseline * 100).toFixed(2)}%, mde ${(r.structure.mde * 100).toFixed(0)}%, ${r.structure.visitorsPerDay.toLocaleString("en-US")} visitors/day`,
    `Simulated: ${r.draws} random truths × ${r.horizonDays} days (seed ${r.seed}); median (p10–p90) over the truths`,
    "",
    `classic split test, fixed horizon   ${show(r.fixedHorizonDays, "days")}`,
    `engine: days until every segment settled   ${show(e.daysToSettle, "days")}` +
      `  (${(e.settledWithinHorizon * 100).toFixed(0)}% of truths settled within ${r.horizonDays} days)`,
    `engine: settled leaders within mde of the best   ${e.settleCorrect === null ? "—" : `${(e.settleCorrect * 100).toFixed(1)}%`}`,
    `engine: regret over ${r.horizonDays} days   ${show(e.regret, "conversions lost", 0)}`,
    `split test: regret over ${r.horizonDays} days   ${show(e.splitRegret, "conversions lost", 0)}   → engine saves ${(e.savingVsSplit * 100).toFixed(0)}%`,
    "",
    `Truths drawn as: ${r.prior}`,
  ].join("\n");
}

export async function run(argv: string[]): Promise<number> {
  const { values } = parseFlags(() =>
    parseArgs({ args: argv, strict: true, allowPositionals: false, options: {
        factors: { type: "string" },
        segments: { type: "string" },
        baseline: { type: "string" },
        mde: { type: "string" },
        "visitors-per-day": { type: "string" },
        days: { type: "string" },
        draws: { type: "string" },
        seed: { type: "string" },
        threads: { type: "string" },
        json: { type: "boolean" },
      } }),
  );
  const levels = levelsFlag(values.factors);
  const segments = numberFlag("segments", required("segments", values.segments), 0, { min: 1, max: 100, integer: true });
  const baseline = numberFlag("baseline", required("baseline", values.baseline), 0, { min: 0, max: 1, exclusiveMin: true, exclusiveMax: true });
  const mde = numberFlag("mde", required("mde", values.mde), 0, { min: 0, max: 1, exclusiveMin: true, exclusiveMax: true });
  const visitorsPerDay = numberFlag("visitors-per-day", required("visitors-per-day", values["visitors-per-day"]), 0, {
    min: 0,
    max: 1e8,
    exclusiveMin: true,
  });
  const horizonDays = numberFlag("days", values.days, 10, { min: 0.1, max: 365 });
  const draws = numberFlag("draws", values.draws, 8, { min: 1, max: 1000, integer: true });
  const seed = numberFlag("seed", values.seed, 1, { min: 0, max: 2 ** 31, integer: true });
  const threads = values.threads === undefined ? undefined : numberFlag("threads", values.threads, 1, { min: 1, max: 256, integer: true });
  const combinations = levels.reduce((a, b) => a * b, 1);
  if (combinations > 4096) {
    throw fail("INVALID_OPTION", { option: "--factors", reason: `${combinations} combinations; plan simulates at most 4096` });
  }
  if (horizonDays * visitorsPerDay < 1) throw fail("INVALID_OPTION", { option: "--days", reason: "the horizon holds no visitors" });

  const bar = progressBar("planning", !values.json);
  const report = await plan(
    { levels, segments, baseline, mde, visitorsPerDay, horizonDays, engine: {} },
    { draws, seed, ...(threads === undefined ? {} : { threads }), onProgress: (d) => bar.update(d) },
  );
  bar.finish();
  console.log(values.json ? JSON.stringify(report) : formatPlan(report));
  return 0;
}
