/**
 * Argument guards shared by the statistics primitives: each throws INVALID_ARGUMENT naming the
 * argument and saying what a valid value looks like, so a bad count never turns into NaN later.
 */
import { fail } from "../errors.ts";

/** A count of visitors or conversions: a finite integer ≥ 0. */
export function requireCount(name: string, value: number): void {
  if (!Number.isInteger(value) || value < 0) {
    throw fail("INVALID_ARGUMENT", { argument: name, reason: `must be a whole number ≥ 0, got ${value}` }, name);
  }
}

/** Successes out of trials: both counts, trials ≥ 1, successes ≤ trials. */
export function requireTrials(successName: string, successes: number, trialName: string, trials: number): void {
  requireCount(successName, successes);
  requireCount(trialName, trials);
  if (trials === 0) {
    throw fail("INVALID_ARGUMENT", { argument: trialName, reason: "must be at least 1: a rate needs visitors" }, trialName);
  }
  if (successes > trials) {
    throw fail(
      "INVALID_ARGUMENT",
      { argument: successName, reason: `${successes} is more than the ${trials} ${trialName}` },
      successName,
    );
  }
}

/** A probability strictly between 0 and 1 (a level, an α, a power, a rate to plan for). */
export function requireOpenProbability(name: string, value: number): void {
  if (!(value > 0 && value < 1)) {
    throw fail("INVALID_ARGUMENT", { argument: name, reason: `must be strictly between 0 and 1, got ${value}` }, name);
  }
}
