/**
 * The retirement rule (DESIGN.md "Retired", and round 2: decisions must not flip on noise). The
 * binomial tail is checked against jStat's binomial cdf; the rule's fold counting is the design's
 * own definition, checked on hand-made figures.
 */
import { describe, expect, it } from "vitest";
import { parseSettings } from "../../src/model/index.ts";
import { significantCount, updateRetirement, type RetiredEntry, type RetirementInput } from "../../src/model/retirement.ts";
import { jStat } from "./engineFixtures.ts";

const settings = parseSettings({ samples: 1000, retireProbability: 0.001, retireAfterFolds: 3 });
const keys = ["leader", "x"];

/** One fold's figures for `x`: its probability of being best and upper bound, against a leader lower bound of 0.05. */
function fold(p: number, upper: number, counters: Map<string, number>, active: Map<string, RetiredEntry>): ReturnType<typeof updateRetirement> {
  const input: RetirementInput = {
    segment: "s", keys, probabilityBest: [1 - p, p], upper: [0.09, upper], leader: 0, leaderLower: 0.05,
    counters, active, settings, now: 0,
  };
  return updateRetirement(input);
}

const retiredX = (): Map<string, RetiredEntry> => new Map([["x", {
  segment: "s", combination: "x", reason: "dominated",
  figures: { probabilityBest: 0, upper: 0.04, leader: "leader", leaderLower: 0.05, folds: 3 }, retiredAt: 0, reinstatedAt: null,
}]]);

describe("retirement", () => {
  it("counts as significant the smallest count whose binomial upper tail is below 1% (jStat binomial cdf)", () => {
    for (const [M, p] of [[1000, 0.001], [4000, 0.001], [1000, 0.01], [250, 0.002]]) {
      const x = significantCount(M, p);
      const tail = (k: number) => 1 - (k <= 0 ? 0 : jStat.binomial.cdf(k - 1, M, p)); // P(X ≥ k)
      expect(tail(x)).toBeLessThan(0.01);
      expect(tail(x - 1)).toBeGreaterThanOrEqual(0.01);
    }
  });

  it("retires after retireAfterFolds consecutive dominated folds, and starts counting again after a break", () => {
    let counters = new Map<string, number>();
    const none = new Map<string, RetiredEntry>();
    for (const [upper, retires, count] of [[0.04, false, 1], [0.04, false, 2], [0.06, false, 0], [0.04, false, 1], [0.04, false, 2], [0.04, true, 0]] as const) {
      const out = fold(0, upper, counters, none);
      expect(out.retired.length > 0).toBe(retires);
      expect(out.counters.get("x") ?? 0).toBe(count);
      counters = out.counters;
    }
  });

  it("reinstates by the bound only after it has failed for retireAfterFolds consecutive folds, so a passing leader does not", () => {
    const active = retiredX();
    let counters = new Map<string, number>();
    // two folds above the leader's lower bound, then below again: still retired, count cleared
    for (const [upper, count] of [[0.06, 1], [0.07, 2], [0.04, 0], [0.06, 1], [0.06, 2]] as const) {
      const out = fold(0, upper, counters, active);
      expect(out.reinstated.size).toBe(0);
      expect(out.counters.get("x") ?? 0).toBe(count);
      counters = out.counters;
    }
    const third = fold(0, 0.06, counters, active);
    expect(third.reinstated.get("x")).toMatch(/has not been below the leader's lower bound \(now 0\.0500\) for 3 folds/);
    expect(third.counters.has("x")).toBe(false);
  });

  it("reinstates at once when the probability of being best rises beyond sampling noise, and not on one lucky draw", () => {
    const risen = significantCount(settings.samples, settings.retireProbability) / settings.samples;
    expect(fold(1 / settings.samples, 0.04, new Map(), retiredX()).reinstated.size).toBe(0);
    expect(fold(risen, 0.04, new Map(), retiredX()).reinstated.get("x")).toMatch(/probability of being best rose/);
  });
});
