/**
 * `facetwise simulate <scenario.json>`: runs the engine, a classic split test and independent
 * Thompson sampling on the same simulated traffic and prints how they compare (src/sim).
 */
import { mkdirSync, writeFileSync } from "node:fs";
import { availableParallelism } from "node:os";
import { join } from "node:path";
import { parseArgs } from "node:util";
import { fail } from "../errors.ts";
import { bestShareChart, regretChart } from "../sim/charts.ts";
import { numberFlag, parseFlags } from "../sim/cliOptions.ts";
import { fixedHorizon } from "../sim/fixedHorizon.ts";
import { runHarness, runSeed } from "../sim/harness.ts";
import { loadScenario } from "../sim/loadScenario.ts";
import type { MaturityRule } from "../sim/maturity.ts";
import { progressBar } from "../sim/progressBar.ts";
import { formatTable } from "../sim/reportTable.ts";
import { setup } from "../sim/setup.ts";
import { intervalCoverage } from "../sim/intervalCoverage.ts";
import { intervalRows, settledShare, summarize } from "../sim/summarize.ts";

export const summary = "compare the engine with a split test and independent bandits on a scenario";

export const help = `Usage: facetwise simulate <scenario.json> [options]

Runs three policies on the same simulated visitors and compares them:
  facetwise    the real engine (fold, allocation, settle rule), with the scenario's engine settings
  split        uniform allocation over the allowed combinations, leader = best observed rate
  independent  Beta(1,1) Thompson sampling per segment and combination, nothing shared

Options:
  --runs R         runs (default: the scenario's, else 20)
  --visitors N     visitors per run (default: the scenario's, else 200000)
  --seed S         seed; the same seed gives the same report (default 1)
  --json           print exactly one JSON object (no table, no progress bar)
  --intervals      add "intervals" to the JSON report: for every run, segment and allowed combination,
                   the engine's final 95% rate interval and the true rate,
                   {run, segment, share, combination, truth, mean, lower, upper} (with --json or --out)
  --out DIR        also write DIR/report.json, DIR/regret.svg and DIR/best-share.svg
  --threads T      worker threads (default: the machine's cores)
  --maturity M     "server" (default): as the server folds, each pick at once as a trial and its
                   conversion when reported (here: at once); "window": every pick, with its
                   outcome, only when its attribution window closes`;

export async function run(argv: string[]): Promise<number> {
  const { values, positionals } = parseFlags(() =>
    parseArgs({ args: argv, strict: true, allowPositionals: true, options: {
        runs: { type: "string" },
        visitors: { type: "string" },
        seed: { type: "string" },
        json: { type: "boolean" },
        intervals: { type: "boolean" },
        out: { type: "string" },
        threads: { type: "string" },
        maturity: { type: "string" },
      } }),
  );
  if (positionals.length !== 1) {
    throw fail("INVALID_OPTION", { option: "<scenario.json>", reason: "give exactly one scenario file" });
  }
  const maturity = values.maturity ?? "server";
  if (maturity !== "server" && maturity !== "window") {
    throw fail("INVALID_OPTION", { option: "--maturity", reason: `expected "server" or "window", got "${maturity}"` });
  }
  if (values.intervals && !values.json && values.out === undefined) {
    throw fail("INVALID_OPTION", { option: "--intervals", reason: "adds to the JSON report: use it with --json or --out" });
  }
  const scenario = loadScenario(positionals[0]!);
  const runs = numberFlag("runs", values.runs, scenario.runs, { min: 1, max: 10_000, integer: true });
  const visitors = numberFlag("visitors", values.visitors, scenario.visitors, { min: 1, max: 1e9, integer: true });
  const seed = numberFlag("seed", values.seed, 1, { min: 0, max: 2 ** 31, integer: true });
  const threads = numberFlag("threads", values.threads, Math.min(runs, availableParallelism()), {
    min: 1,
    max: 256,
    integer: true,
  });
  const prepared = setup(scenario);
  const horizon = fixedHorizon(
    Array.from(prepared.table.phases[0]!.best),
    scenario.segments.map((s) => s.share),
    prepared.keys.length,
    scenario.mde,
  );

  const bar = progressBar("simulating", !values.json);
  const started = performance.now();
  const tasks = Array.from({ length: runs }, (_, run) => ({ scenario, seed: runSeed(seed, run) }));
  const results = await runHarness(tasks, {
    visitors,
    threads,
    maturity: maturity as MaturityRule,
    points: 50,
    // the table prints the intervals' coverage; the JSON carries them only when asked
    intervals: !values.json || values.intervals === true,
    onProgress: (done) => bar.update(done),
  });
  bar.finish();
  const seconds = (performance.now() - started) / 1000;
  const summarized = summarize({ scenario: scenario.name, visitors, seed, mde: scenario.mde, fixedHorizon: horizon }, results);
  const rows = intervalRows(results, scenario.segments, prepared.keys);
  const report = values.intervals ? { ...summarized, intervals: rows } : summarized;

  if (values.out !== undefined) {
    mkdirSync(values.out, { recursive: true });
    writeFileSync(join(values.out, "report.json"), JSON.stringify(report, null, 2) + "\n");
    writeFileSync(join(values.out, "regret.svg"), regretChart(results, visitors, scenario.name));
    writeFileSync(
      join(values.out, "best-share.svg"),
      bestShareChart(results, visitors, scenario.segments.map((s) => s.name), prepared.keys.length, scenario.name),
    );
  }
  if (values.json) console.log(JSON.stringify(report));
  else {
    console.log(
      formatTable(report, {
        visitorsPerDay: scenario.visitorsPerDay,
        combinations: prepared.keys.length,
        seconds,
        settledShare: settledShare(results, "facetwise"),
        coverage: intervalCoverage(rows),
      }),
    );
    if (values.out !== undefined) console.log(`\nWrote ${join(values.out, "report.json")}, regret.svg and best-share.svg`);
  }
  return 0;
}
