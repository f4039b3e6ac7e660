/**
 * The classic full-factorial split test: every allowed combination gets an equal share of each
 * segment's traffic for the whole horizon; the leader is the best observed conversion rate
 * (ties → the lower index). No stopping rule.
 */
import type { Rng } from "../model/index.ts";
import { conversionTally } from "./conversionTally.ts";
import type { Policy } from "./policy.ts";

export function splitPolicy(segmentCount: number, combinationCount: number, rng: Rng): Policy {
  const tally = conversionTally(segmentCount, combinationCount);
  return {
    serve: () => rng.int(combinationCount),
    observe: tally.observe,
    fold() {},
    leaders: () => tally.leaders((k, n) => (n > 0 ? k / n : 0)),
  };
}
