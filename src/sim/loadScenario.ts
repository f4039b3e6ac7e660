/**
 * Reads a scenario file from disk and checks it (scenario.ts); unreadable files and bad JSON end
 * as INVALID_SCENARIO too, naming the file.
 */
import { readFileSync } from "node:fs";
import { fail } from "../errors.ts";
import { parseScenario, type Scenario } from "./scenario.ts";

export function loadScenario(path: string): Scenario {
  let text: string;
  try {
    text = readFileSync(path, "utf8");
  } catch (error) {
    throw fail("INVALID_SCENARIO", { path, reason: `cannot read the file (${(error as NodeJS.ErrnoException).code ?? "error"})` }, "scenario");
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (error) {
    throw fail("INVALID_SCENARIO", { path, reason: `not valid JSON: ${(error as Error).message}` }, "scenario");
  }
  return parseScenario(json);
}
