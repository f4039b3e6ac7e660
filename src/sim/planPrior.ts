/**
 * Random truths for `facetwise plan`: a scenario with the page's structure (levels per factor,
 * segment count, baseline rate, mde, traffic) whose effects are drawn from a documented, seeded
 * prior. Log-odds effects (common practice, no source — the same sizes DESIGN.md assumes:
 * page elements move conversion by tenths of a log-odds unit, interactions by less, segments by
 * more):
 *   each non-reference level's main effect      ~ N(0, 0.15²)
 *   each pair of non-reference levels of two factors ~ N(0, 0.08²)
 *   each segment's shift of the intercept        ~ N(0, 0.3²)
 *   each segment's own deviation of a main effect ~ N(0, 0.05²)
 * Segments have equal shares. The first level of every factor is the baseline combination, at
 * the given baseline rate before the segment shift.
 */
import { createRng } from "../model/index.ts";
import type { Scenario, Truth } from "./scenario.ts";

export const PLAN_PRIOR = { main: 0.15, pair: 0.08, segmentShift: 0.3, segmentMain: 0.05 } as const;

export interface PlanStructure {
  levels: number[];
  segments: number;
  baseline: number;
  mde: number;
  visitorsPerDay: number;
  visitors: number;
  engine: Record<string, unknown>;
}

const round = (x: number): number => Number(x.toFixed(4));

export function drawPlanScenario(structure: PlanStructure, seed: number): Scenario {
  const rng = createRng(seed);
  const factors = structure.levels.map((count, f) => ({
    name: `f${f + 1}`,
    levels: Array.from({ length: count }, (_, l) => `l${l + 1}`),
  }));
  const drawMain = (sd: number): NonNullable<Truth["main"]> =>
    Object.fromEntries(
      factors.map((f) => [f.name, Object.fromEntries(f.levels.slice(1).map((l) => [l, round(sd * rng.normal())]))]),
    );
  const main = drawMain(PLAN_PRIOR.main);
  const pairs: NonNullable<Truth["pairs"]> = [];
  for (let a = 0; a < factors.length; a++) {
    for (let b = a + 1; b < factors.length; b++) {
      for (const la of factors[a]!.levels.slice(1)) {
        for (const lb of factors[b]!.levels.slice(1)) {
          pairs.push({ when: { [factors[a]!.name]: la, [factors[b]!.name]: lb }, shift: round(PLAN_PRIOR.pair * rng.normal()) });
        }
      }
    }
  }
  const segments = Array.from({ length: structure.segments }, (_, s) => ({ name: `s${s + 1}`, share: 1 / structure.segments }));
  const truth: Truth = {
    baseline: structure.baseline,
    main,
    pairs,
    segments: Object.fromEntries(
      segments.map((s) => [s.name, { shift: round(PLAN_PRIOR.segmentShift * rng.normal()), main: drawMain(PLAN_PRIOR.segmentMain) }]),
    ),
  };
  return {
    name: `plan draw ${seed}`,
    factors,
    exclude: [],
    segments,
    phases: [{ from: 0, truth }],
    mde: structure.mde,
    visitorsPerDay: structure.visitorsPerDay,
    engine: structure.engine,
    visitors: structure.visitors,
    runs: 1,
  };
}
