import { describe, expect, it } from "vitest";
import { runHarness } from "../../src/sim/harness.ts";
import { runSimulation } from "../../src/sim/runSimulation.ts";
import { parseScenario } from "../../src/sim/scenario.ts";
import { setup } from "../../src/sim/setup.ts";

// Two combinations with exact rates 10% and 20% in one segment: regret is hand-computable.
const twoArms = parseScenario({
  name: "two arms",
  factors: [{ name: "page", levels: ["a", "b"] }],
  segments: [{ name: "all", share: 1 }],
  truth: { baseline: 0.1, rates: { all: { "page=a": 0.1, "page=b": 0.2 } } },
  visitors: 3000,
});

const small = parseScenario({
  name: "small",
  factors: [
    { name: "headline", levels: ["a", "b", "c"] },
    { name: "hero", levels: ["x", "y"] },
    { name: "cta", levels: ["p", "q"] },
  ],
  segments: [
    { name: "s1", share: 0.7 },
    { name: "s2", share: 0.3 },
  ],
  truth: { baseline: 0.05, main: { headline: { b: 0.3 }, hero: { y: 0.2 } }, segments: { s2: { shift: -0.3 } } },
  phases: [{ from: 2000, truth: { main: { headline: { c: 0.4 } } } }],
  visitorsPerDay: 2000,
  engine: { attributionWindowHours: 1, foldIntervalSeconds: 3600 },
});

describe("runSimulation", () => {
  it("books split-test regret as 0.1 per visitor served the 10% page (hand-computable)", () => {
    const r = runSimulation(setup(twoArms), { visitors: 3000, seed: 5, maturity: "server", points: 1, policies: ["split"] });
    const onBest = r.split.bestShare[0]![0]! * 3000;
    expect(Number.isInteger(Math.round(onBest))).toBe(true);
    expect(r.split.regret).toBeCloseTo(0.1 * (3000 - onBest), 9);
    // A uniform split serves each page about half the time (binomial sd ≈ 27 of 3000).
    expect(Math.abs(onBest - 1500)).toBeLessThan(150);
    expect(r.split.visitorsToSettle).toBeNull();
  });

  it("reports the engine's final intervals beside the final truth only when asked", () => {
    const s = setup(twoArms);
    const options = { visitors: 3000, seed: 5, maturity: "server" as const, points: 1, policies: ["facetwise", "split"] as const };
    const asked = runSimulation(s, { ...options, intervals: true });
    expect(asked.facetwise.intervals!.map((i) => [i.segment, i.combination, i.truth])).toEqual([[0, 0, 0.1], [0, 1, 0.2]]);
    for (const i of asked.facetwise.intervals!) expect(i.lower < i.mean && i.mean < i.upper).toBe(true);
    expect(asked.split.intervals).toBeUndefined(); // baselines report no intervals
    const plain = runSimulation(s, options);
    expect(plain.facetwise.intervals).toBeUndefined();
    // Asking for them happens after the run: nothing else changes.
    expect({ ...asked.facetwise, intervals: undefined }).toEqual({ ...plain.facetwise, intervals: undefined });
  });

  it("is deterministic given a seed, and a different seed changes the run", () => {
    const s = setup(small);
    const options = { visitors: 4000, maturity: "server" as const, points: 4 };
    const a = runSimulation(s, { ...options, seed: 11 });
    const b = runSimulation(s, { ...options, seed: 11 });
    const c = runSimulation(s, { ...options, seed: 12 });
    expect(b).toEqual(a);
    expect(c.facetwise.regret).not.toBe(a.facetwise.regret);
  });

  it("gives every policy the same visitors: serving the same page yields the same outcome", () => {
    // Only one allowed combination: every policy must serve it, so all three see identical outcomes.
    const one = parseScenario({
      name: "one page",
      factors: [{ name: "page", levels: ["a", "b"] }],
      exclude: [{ page: "b" }],
      segments: [{ name: "all", share: 1 }],
      truth: { baseline: 0.3 },
    });
    const r = runSimulation(setup(one), { visitors: 500, seed: 3, maturity: "server", points: 1 });
    expect(r.split.conversions).toBe(r.facetwise.conversions);
    expect(r.independent.conversions).toBe(r.facetwise.conversions);
    expect(r.facetwise.regret).toBe(0);
  });

  it("judges final leaders on the last phase's truth", () => {
    // In the second phase headline c is best; after 6000 visitors a split test finds it in s1.
    const r = runSimulation(setup(small), { visitors: 6000, seed: 2, maturity: "server", points: 2, policies: ["split"] });
    expect(r.split.bestShare[0]!.every((x) => x > 0 && x < 0.5)).toBe(true);
    expect(r.split.finalCorrect).toHaveLength(2);
  });
});

describe("runHarness", () => {
  it("gives the same results on worker threads as in one thread (tsx workers load)", async () => {
    const tasks = [0, 1, 2].map((seed) => ({ scenario: small, seed }));
    const options = { visitors: 1500, maturity: "server" as const, points: 3, policies: ["split", "independent"] as const };
    const inline = await runHarness(tasks, { ...options, threads: 1 });
    const threaded = await runHarness(tasks, { ...options, threads: 2 });
    expect(threaded).toEqual(inline);
  });
});
