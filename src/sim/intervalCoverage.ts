/**
 * Coverage of the engine's final 95% rate intervals in a simulation: the share of intervals (run ×
 * segment × allowed combination) that contain the true rate, over all of them and over those of
 * segments with at most 10% of the traffic, each with a 95% Wilson score interval for that share
 * (E. B. Wilson, JASA 22, 1927; src/model/calibration.ts). The intervals of one run come from one
 * posterior and are not independent, so the binomial interval understates the real uncertainty of
 * the share; more runs narrow it honestly.
 */
import { wilsonInterval } from "../model/index.ts";

/** Segments with at most this share of traffic count as small. */
export const SMALL_SHARE = 0.1;

export interface Coverage {
  covered: number;
  total: number;
  /** covered / total, with its 95% Wilson interval */
  share: number;
  lower: number;
  upper: number;
}

export interface IntervalOutcome {
  /** The segment's share of traffic. */
  share: number;
  truth: number;
  lower: number;
  upper: number;
}

export function intervalCoverage(rows: IntervalOutcome[]): { overall: Coverage | null; small: Coverage | null } {
  const count = (subset: IntervalOutcome[]): Coverage | null => {
    if (subset.length === 0) return null;
    const covered = subset.filter((r) => r.lower <= r.truth && r.truth <= r.upper).length;
    return { covered, total: subset.length, share: covered / subset.length, ...wilsonInterval(covered, subset.length) };
  };
  return { overall: count(rows), small: count(rows.filter((r) => r.share <= SMALL_SHARE)) };
}
