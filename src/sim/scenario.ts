/**
 * Scenario files: the shape described in DESIGN.md "Scenario files", checked in two passes — the
 * JSON shape (zod) and then the cross-references (factor, level and segment names, shares, phase
 * order) — so a bad file ends with one INVALID_SCENARIO error naming the path and what to fix.
 *
 * Defaults beyond DESIGN.md (stated here once): visitorsPerDay 20000, visitors 200000, runs 20,
 * mde 0.10. A phase's `truth` may leave out any part (baseline, main, pairs, segments, rates); a
 * part left out is carried over from the truth before it.
 */
import { z } from "zod";
import { fail } from "../errors.ts";
import { firstIssue, reasonOf } from "../issues.ts";

export const DEFAULT_VISITORS_PER_DAY = 20000;
export const DEFAULT_VISITORS = 200000;
export const DEFAULT_RUNS = 20;
export const DEFAULT_MDE = 0.1;

const name = z.string().min(1, "must be a non-empty name");
const logOdds = z.number().finite().refine((v) => Math.abs(v) <= 20, "log-odds shifts beyond ±20 are not rates");
const probability = z.number().gt(0, "must be above 0").lt(1, "must be below 1");
const partial = z.record(z.string(), z.string());
const mainShifts = z.record(z.string(), z.record(z.string(), logOdds));
const whenShift = z.strictObject({ when: partial, shift: logOdds });

const segmentTruth = z.strictObject({
  shift: logOdds.optional(),
  main: mainShifts.optional(),
  pairs: z.array(whenShift).optional(),
});

const truthShape = {
  baseline: probability,
  main: mainShifts.optional(),
  pairs: z.array(whenShift).optional(),
  segments: z.record(z.string(), segmentTruth).optional(),
  rates: z.record(z.string(), z.record(z.string(), z.number().min(0, "must be ≥ 0").max(1, "must be ≤ 1"))).optional(),
};
const truthSchema = z.strictObject(truthShape);
const phaseTruthSchema = z.strictObject({ ...truthShape, baseline: probability.optional() });

const scenarioSchema = z.strictObject({
  name,
  factors: z.array(z.strictObject({ name, levels: z.array(name).min(1, "a factor needs at least one level") })).min(1),
  exclude: z.array(partial).optional(),
  segments: z.array(z.strictObject({ name, share: z.number().gt(0, "must be above 0").max(1) })).min(1),
  truth: truthSchema,
  phases: z.array(z.strictObject({ from: z.number().int().positive(), truth: phaseTruthSchema })).optional(),
  mde: z.number().gt(0).lt(1).optional(),
  visitorsPerDay: z.number().positive().optional(),
  engine: z.record(z.string(), z.unknown()).optional(),
  visitors: z.number().int().positive().optional(),
  runs: z.number().int().positive().optional(),
});

export type WhenShift = z.infer<typeof whenShift>;
export type SegmentTruth = z.infer<typeof segmentTruth>;
export type Truth = z.infer<typeof truthSchema>;
export type PhaseTruth = z.infer<typeof phaseTruthSchema>;

/** A checked scenario with every default filled in; `phases[0]` is the opening truth (from 0). */
export interface Scenario {
  name: string;
  factors: { name: string; levels: string[] }[];
  exclude: Record<string, string>[];
  segments: { name: string; share: number }[];
  phases: { from: number; truth: Truth }[];
  mde: number;
  visitorsPerDay: number;
  engine: Record<string, unknown>;
  visitors: number;
  runs: number;
}

function invalid(path: (string | number)[] | string, reason: string): never {
  throw fail("INVALID_SCENARIO", { path: typeof path === "string" ? path : path.join(".") || "(top)", reason }, "scenario");
}

function quoteList(names: string[]): string {
  return names.map((n) => `"${n}"`).join(", ");
}

/** Checks that every factor/level named in a partial combination exists. */
function checkPartial(
  factors: Scenario["factors"],
  partialCombination: Record<string, string>,
  path: string,
  minimum: number,
): void {
  const entries = Object.entries(partialCombination);
  if (entries.length < minimum) invalid(path, `must name at least ${minimum} factor(s)`);
  for (const [factor, level] of entries) checkLevel(factors, factor, level, `${path}.${factor}`);
}

function checkLevel(factors: Scenario["factors"], factor: string, level: string, path: string): void {
  const spec = factors.find((f) => f.name === factor);
  if (!spec) invalid(path, `unknown factor "${factor}"; the factors are ${quoteList(factors.map((f) => f.name))}`);
  if (!spec.levels.includes(level)) {
    invalid(path, `unknown level "${level}" of factor "${factor}"; its levels are ${quoteList(spec.levels)}`);
  }
}

function checkMain(factors: Scenario["factors"], main: Truth["main"], path: string): void {
  for (const [factor, levels] of Object.entries(main ?? {})) {
    for (const level of Object.keys(levels)) checkLevel(factors, factor, level, `${path}.${factor}.${level}`);
  }
}

function checkTruth(scenario: Pick<Scenario, "factors" | "segments">, truth: PhaseTruth, path: string): void {
  const segmentNames = scenario.segments.map((s) => s.name);
  checkMain(scenario.factors, truth.main, `${path}.main`);
  (truth.pairs ?? []).forEach((p, i) => checkPartial(scenario.factors, p.when, `${path}.pairs.${i}.when`, 1));
  for (const [segment, st] of Object.entries(truth.segments ?? {})) {
    if (!segmentNames.includes(segment)) {
      invalid(`${path}.segments.${segment}`, `unknown segment "${segment}"; the segments are ${quoteList(segmentNames)}`);
    }
    checkMain(scenario.factors, st.main, `${path}.segments.${segment}.main`);
    (st.pairs ?? []).forEach((p, i) =>
      checkPartial(scenario.factors, p.when, `${path}.segments.${segment}.pairs.${i}.when`, 1),
    );
  }
  for (const segment of Object.keys(truth.rates ?? {})) {
    if (!segmentNames.includes(segment)) {
      invalid(`${path}.rates.${segment}`, `unknown segment "${segment}"; the segments are ${quoteList(segmentNames)}`);
    }
  }
}

/**
 * Parses and checks a scenario (already JSON-decoded). Combination keys in `rates` and the
 * `engine` settings are checked later, against the engine's design and settings schema
 * (see truthTable.ts and runSimulation.ts), because those rules live in src/model.
 */
export function parseScenario(input: unknown): Scenario {
  const parsed = scenarioSchema.safeParse(input, { reportInput: true });
  if (!parsed.success) {
    const issue = firstIssue(parsed.error.issues);
    invalid(issue.path.map((p) => (typeof p === "symbol" ? String(p) : p)), reasonOf(issue));
  }
  const raw = parsed.data;
  const factorNames = raw.factors.map((f) => f.name);
  raw.factors.forEach((f, i) => {
    if (factorNames.indexOf(f.name) !== i) invalid(`factors.${i}.name`, `factor "${f.name}" is listed twice`);
    f.levels.forEach((l, j) => {
      if (f.levels.indexOf(l) !== j) invalid(`factors.${i}.levels.${j}`, `level "${l}" is listed twice`);
    });
  });
  const segmentNames = raw.segments.map((s) => s.name);
  raw.segments.forEach((s, i) => {
    if (segmentNames.indexOf(s.name) !== i) invalid(`segments.${i}.name`, `segment "${s.name}" is listed twice`);
  });
  const shareSum = raw.segments.reduce((a, s) => a + s.share, 0);
  if (Math.abs(shareSum - 1) > 1e-6) {
    invalid("segments", `the shares must add up to 1; they add up to ${Number(shareSum.toFixed(6))}`);
  }
  (raw.exclude ?? []).forEach((e, i) => checkPartial(raw.factors, e, `exclude.${i}`, 1));

  const visitors = raw.visitors ?? DEFAULT_VISITORS;
  checkTruth(raw, raw.truth, "truth");
  const phases: Scenario["phases"] = [{ from: 0, truth: raw.truth }];
  (raw.phases ?? []).forEach((phase, i) => {
    const previous = phases[phases.length - 1]!;
    if (phase.from <= previous.from) {
      invalid(`phases.${i}.from`, `phases must start in increasing visitor order (${phase.from} ≤ ${previous.from})`);
    }
    checkTruth(raw, phase.truth, `phases.${i}.truth`);
    const truth: Truth = { ...previous.truth };
    for (const [key, value] of Object.entries(phase.truth)) {
      if (value !== undefined) (truth as Record<string, unknown>)[key] = value;
    }
    phases.push({ from: phase.from, truth });
  });

  return {
    name: raw.name,
    factors: raw.factors,
    exclude: raw.exclude ?? [],
    segments: raw.segments,
    phases,
    mde: raw.mde ?? DEFAULT_MDE,
    visitorsPerDay: raw.visitorsPerDay ?? DEFAULT_VISITORS_PER_DAY,
    engine: raw.engine ?? {},
    visitors,
    runs: raw.runs ?? DEFAULT_RUNS,
  };
}
