/**
 * One simulated run: the three policies serve the same visitor stream (common random numbers,
 * visitorStream.ts), each pick matures by the attribution rule (maturity.ts), every policy folds
 * on the page's fold interval, and the run records per policy the regret, conversions and
 * traffic on the true best (regretLedger.ts), whether the final leaders are within `mde` of their
 * segment's best (final phase's truth), and when each segment first settled and whether that
 * leader was right (truth at that moment); when asked, the engine's final 95% rate intervals beside
 * the final phase's true rates.
 */
import { createRng } from "../model/index.ts";
import { facetwisePolicy } from "./facetwisePolicy.ts";
import { independentPolicy } from "./independentPolicy.ts";
import { MaturityQueue, type MaturityRule } from "./maturity.ts";
import type { Policy } from "./policy.ts";
import type { Setup } from "./setup.ts";
import { splitPolicy } from "./splitPolicy.ts";
import { RegretLedger } from "./regretLedger.ts";
import { phaseAt, type PhaseTable } from "./truthTable.ts";
import { visitorStream } from "./visitorStream.ts";

export const POLICY_NAMES = ["facetwise", "split", "independent"] as const;
export type PolicyName = (typeof POLICY_NAMES)[number];

export interface RunOptions {
  visitors: number;
  /** The run's own seed (see harness.ts runSeed). */
  seed: number;
  maturity: MaturityRule;
  /** Points on the cumulative-regret curve and buckets for the best-share series. */
  points: number;
  /** Policies to run (default all three). */
  policies?: readonly PolicyName[];
  /** Whether the engine reports its final rate intervals (FinalInterval; computed once, at the end). */
  intervals?: boolean;
  /** Called after each slice with the share of the run done (for progress bars). */
  onSlice?: (done: number) => void;
}

export interface PolicyRun {
  regret: number;
  conversions: number;
  /** Per segment: 1 if the final leader is within mde of the best, else 0. */
  finalCorrect: number[];
  /** Visitor index when the last segment first settled; null if some segment never did or no stopping rule. */
  visitorsToSettle: number | null;
  /** Per segment: 1/0 whether the settled leader was within mde; null if it never settled. */
  settleCorrect: (number | null)[] | null;
  /** Cumulative regret after each of `points` equal slices of the horizon. */
  curve: number[];
  /** bestShare[s][b]: share of segment s's visitors in slice b served the segment's true best. */
  bestShare: number[][];
  /** The policy's final 95% rate intervals with the final truth, when asked and the policy has them. */
  intervals?: FinalInterval[];
}

/** One segment's and combination's final interval (indices as in the truth table), beside its true rate. */
export interface FinalInterval {
  segment: number;
  combination: number;
  truth: number;
  mean: number;
  lower: number;
  upper: number;
}

export type RunResult = Record<PolicyName, PolicyRun>;

function isCorrect(phase: PhaseTable, C: number, segment: number, combination: number, mde: number): number {
  return phase.rates[segment * C + combination]! >= (1 - mde) * phase.best[segment]! ? 1 : 0;
}

export function runSimulation(setup: Setup, options: RunOptions): RunResult {
  const { scenario, table, scale } = setup;
  const S = table.segmentCount;
  const C = table.combinationCount;
  const N = options.visitors;
  const names = options.policies ?? POLICY_NAMES;
  const stream = visitorStream(scenario.segments.map((s) => s.share), N, options.seed);
  const make = (name: PolicyName, rngSeed: number): Policy => {
    const rng = createRng(rngSeed);
    if (name === "split") return splitPolicy(S, C, rng);
    if (name === "independent") return independentPolicy(S, C, rng);
    return facetwisePolicy({
      design: setup.design,
      settings: setup.settings,
      segmentNames: scenario.segments.map((s) => s.name),
      keys: setup.keys,
      msPerVisitor: scale.msPerVisitor,
      rng,
    });
  };
  const policies = names.map((name) => make(name, options.seed * 7 + 1 + POLICY_NAMES.indexOf(name)));
  const queues = policies.map(
    (p) => new MaturityQueue(scale.windowVisitors, options.maturity, (s, c, converted) => p.observe(s, c, converted)),
  );
  const P = policies.length;
  const ledgers = policies.map(() => new RegretLedger(S, C, options.points));
  const sliceOf = (t: number): number => Math.min(options.points - 1, Math.floor((t * options.points) / N));

  let phaseIndex = 0;
  let phase = table.phases[0]!;
  for (let t = 0; t < N; t++) {
    while (phaseIndex + 1 < table.phases.length && table.phases[phaseIndex + 1]!.from <= t) {
      phase = table.phases[++phaseIndex]!;
    }
    const fold = t > 0 && t % scale.foldEvery === 0;
    const s = stream.segment[t]!;
    const u = stream.u[t]!;
    const slice = sliceOf(t);
    for (let p = 0; p < P; p++) {
      queues[p]!.drain(t);
      if (fold) policies[p]!.fold(t);
      const c = policies[p]!.serve(s);
      queues[p]!.add(t, s, c, ledgers[p]!.record(phase, slice, s, c, u));
    }
    if (t === N - 1 || sliceOf(t + 1) !== slice) {
      for (const ledger of ledgers) ledger.endSlice();
      options.onSlice?.((t + 1) / N);
    }
  }

  // Judge final leaders after every window has closed, as a fixed-horizon analysis would.
  const finalPhase = phaseAt(table, N - 1);
  const result = {} as RunResult;
  names.forEach((name, p) => {
    queues[p]!.drain(N + scale.windowVisitors);
    policies[p]!.fold(N + scale.windowVisitors);
    const leaders = policies[p]!.leaders();
    const settled = policies[p]!.settled?.();
    const intervals = options.intervals ? policies[p]!.intervals?.() : undefined;
    result[name] = {
      regret: ledgers[p]!.regret,
      conversions: ledgers[p]!.conversions,
      finalCorrect: Array.from(leaders, (c, s) => isCorrect(finalPhase, C, s, c, scenario.mde)),
      visitorsToSettle:
        settled && settled.every((r) => r !== null && r.visitor < N)
          ? Math.max(...settled.map((r) => r!.visitor))
          : null,
      settleCorrect: settled
        ? settled.map((r, s) =>
            r === null || r.visitor >= N ? null : isCorrect(phaseAt(table, r.visitor), C, s, r.leader, scenario.mde),
          )
        : null,
      curve: ledgers[p]!.curve,
      bestShare: ledgers[p]!.bestShare(),
      ...(intervals && {
        intervals: intervals.flatMap((rates, s) =>
          rates.map((r, c) => ({ segment: s, combination: c, truth: finalPhase.rates[s * C + c]!, mean: r.mean, lower: r.lower, upper: r.upper })),
        ),
      }),
    };
  });
  return result;
}
