/**
 * The scenario's hidden truth as a table: for every phase, segment and allowed combination, the
 * true conversion rate, plus each segment's best rate. Rates are
 *   σ(logit(baseline) + segment shift + Σ main shifts (page-wide + segment's own)
 *     + Σ shifts of every `when` that the combination matches (any number of factors)),
 * unless `rates` names the combination for that segment exactly (DESIGN.md "Scenario files").
 */
import { fail } from "../errors.ts";
import type { Scenario, Truth, WhenShift } from "./scenario.ts";

export interface PhaseTable {
  /** First visitor index (0-based) this phase's truth applies to. */
  from: number;
  /** rates[s * combinationCount + c]: segment s, allowed combination c. */
  rates: Float64Array;
  /** Best true rate in each segment. */
  best: Float64Array;
  /** Index of (one of) the best combination(s) in each segment. */
  bestIndex: Int32Array;
}

export interface TruthTable {
  segmentCount: number;
  combinationCount: number;
  phases: PhaseTable[];
}

const logit = (p: number): number => Math.log(p / (1 - p));
const sigmoid = (x: number): number => 1 / (1 + Math.exp(-x));

interface CompiledWhen {
  factors: number[];
  levels: number[];
  shift: number;
}

function compileWhens(scenario: Scenario, whens: WhenShift[] | undefined): CompiledWhen[] {
  return (whens ?? []).map((w) => {
    const entries = Object.entries(w.when);
    return {
      factors: entries.map(([f]) => scenario.factors.findIndex((x) => x.name === f)),
      levels: entries.map(([f, l]) => scenario.factors.find((x) => x.name === f)!.levels.indexOf(l)),
      shift: w.shift,
    };
  });
}

/** mainShift[f][l] summed over the given main-effect maps. */
function compileMain(scenario: Scenario, mains: (Truth["main"] | undefined)[]): Float64Array[] {
  return scenario.factors.map((factor) => {
    const shifts = new Float64Array(factor.levels.length);
    for (const main of mains) {
      for (const [level, shift] of Object.entries(main?.[factor.name] ?? {})) shifts[factor.levels.indexOf(level)] += shift;
    }
    return shifts;
  });
}

function linearScore(
  baseline: number,
  segmentShift: number,
  main: Float64Array[],
  whens: CompiledWhen[],
  combination: number[],
): number {
  let x = logit(baseline) + segmentShift;
  for (let f = 0; f < main.length; f++) x += main[f]![combination[f]!]!;
  for (const w of whens) {
    let matches = true;
    for (let i = 0; i < w.factors.length && matches; i++) matches = combination[w.factors[i]!] === w.levels[i];
    if (matches) x += w.shift;
  }
  return x;
}

/**
 * Builds the table over the allowed combinations (in the order given, with their canonical keys).
 * Keys in `rates` must be allowed combinations' canonical keys, else INVALID_SCENARIO.
 */
export function buildTruthTable(scenario: Scenario, combinations: number[][], keys: string[]): TruthTable {
  const S = scenario.segments.length;
  const C = combinations.length;
  const keyIndex = new Map(keys.map((k, i) => [k, i]));
  const phases = scenario.phases.map((phase, p): PhaseTable => {
    const truth = phase.truth;
    const rates = new Float64Array(S * C);
    const best = new Float64Array(S);
    const bestIndex = new Int32Array(S);
    scenario.segments.forEach((segment, s) => {
      const st = truth.segments?.[segment.name];
      const main = compileMain(scenario, [truth.main, st?.main]);
      const whens = [...compileWhens(scenario, truth.pairs), ...compileWhens(scenario, st?.pairs)];
      for (let c = 0; c < C; c++) {
        rates[s * C + c] = sigmoid(linearScore(truth.baseline, st?.shift ?? 0, main, whens, combinations[c]!));
      }
      for (const [key, rate] of Object.entries(truth.rates?.[segment.name] ?? {})) {
        const c = keyIndex.get(key);
        if (c === undefined) {
          const where = p === 0 ? "truth" : `phases.${p - 1}.truth`;
          throw fail(
            "INVALID_SCENARIO",
            {
              path: `${where}.rates.${segment.name}`,
              reason: `"${key}" is not an allowed combination's key (excluded, misspelt or factors out of order); keys look like "${keys[0]}"`,
            },
            "scenario",
          );
        }
        rates[s * C + c] = rate;
      }
      let b = 0;
      for (let c = 1; c < C; c++) if (rates[s * C + c]! > rates[s * C + b]!) b = c;
      best[s] = rates[s * C + b]!;
      bestIndex[s] = b;
    });
    return { from: phase.from, rates, best, bestIndex };
  });
  return { segmentCount: S, combinationCount: C, phases };
}

/** The phase in force for a visitor index. */
export function phaseAt(table: TruthTable, visitor: number): PhaseTable {
  let phase = table.phases[0]!;
  for (const p of table.phases) if (p.from <= visitor) phase = p;
  return phase;
}
