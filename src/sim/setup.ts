/**
 * Everything a run needs that depends only on the scenario: the engine's design (built by
 * src/model from the scenario's factors and exclusions), the allowed combinations and their keys,
 * the truth table, the engine settings and the time scale. Engine-side errors (a bad `engine`
 * setting, every combination excluded) are re-reported as INVALID_SCENARIO with the scenario path.
 */
import { FacetwiseError, fail } from "../errors.ts";
import {
  allowedCombinations,
  buildDesign,
  combinationKey,
  parseSettings,
  type Design,
  type PageSettings,
} from "../model/index.ts";
import type { Scenario } from "./scenario.ts";
import { timeScale, type TimeScale } from "./timeScale.ts";
import { buildTruthTable, type TruthTable } from "./truthTable.ts";

export interface Setup {
  scenario: Scenario;
  design: Design;
  combinations: number[][];
  keys: string[];
  table: TruthTable;
  settings: PageSettings;
  scale: TimeScale;
}

function rethrow(path: string, error: unknown): never {
  if (error instanceof FacetwiseError) {
    const where = error.code === "INVALID_SETTING" ? `${path}.${error.field ?? ""}` : path;
    throw fail("INVALID_SCENARIO", { path: where, reason: error.message }, "scenario");
  }
  throw error;
}

export function setup(scenario: Scenario): Setup {
  let settings: PageSettings;
  try {
    settings = parseSettings(scenario.engine);
  } catch (error) {
    rethrow("engine", error);
  }
  let design: Design;
  let combinations: number[][];
  try {
    design = buildDesign({
      factors: scenario.factors.map((f) => ({ name: f.name, levels: f.levels.map((name) => ({ name })) })),
      exclude: scenario.exclude,
    });
    combinations = allowedCombinations(design);
  } catch (error) {
    rethrow("factors", error);
  }
  const keys = combinations.map((c) => combinationKey(design, c));
  return {
    scenario,
    design,
    combinations,
    keys,
    table: buildTruthTable(scenario, combinations, keys),
    settings,
    scale: timeScale(scenario.visitorsPerDay, settings.foldIntervalSeconds, settings.attributionWindowHours),
  };
}
