import { describe, expect, it } from "vitest";
import { allowedCombinations, buildDesign, combinationKey } from "../../src/model/index.ts";
import { parseScenario } from "../../src/sim/scenario.ts";
import { buildTruthTable, phaseAt } from "../../src/sim/truthTable.ts";

// Expected rates follow DESIGN.md "Scenario files": rate = σ(logit(baseline) + segment shift +
// main shifts + shifts of every matching `when`), `rates` overriding exactly. σ and logit are
// the standard logistic function and its inverse.
const sigmoid = (x: number): number => 1 / (1 + Math.exp(-x));
const logit = (p: number): number => Math.log(p / (1 - p));

function tableOf(input: unknown) {
  const scenario = parseScenario(input);
  const design = buildDesign({
    factors: scenario.factors.map((f) => ({ name: f.name, levels: f.levels.map((name) => ({ name })) })),
    exclude: scenario.exclude,
  });
  const combinations = allowedCombinations(design);
  const keys = combinations.map((c) => combinationKey(design, c));
  return { table: buildTruthTable(scenario, combinations, keys), keys };
}

const scenario = {
  name: "t",
  factors: [
    { name: "a", levels: ["a0", "a1"] },
    { name: "b", levels: ["b0", "b1"] },
    { name: "c", levels: ["c0", "c1"] },
  ],
  exclude: [{ a: "a1", b: "b0", c: "c0" }],
  segments: [
    { name: "s", share: 0.6 },
    { name: "t", share: 0.4 },
  ],
  truth: {
    baseline: 0.04,
    main: { a: { a1: 0.2 }, c: { c1: -0.1 } },
    pairs: [
      { when: { a: "a1", b: "b1" }, shift: 0.15 },
      { when: { a: "a1", b: "b1", c: "c1" }, shift: 0.3 },
    ],
    segments: { t: { shift: -0.5, main: { b: { b1: 0.1 } } } },
    rates: { s: { "a=a0|b=b0|c=c1": 0.09 } },
  },
  phases: [{ from: 50, truth: { baseline: 0.02 } }],
};

describe("buildTruthTable", () => {
  it("applies main effects, segment effects, two- and three-factor `when`s, rates and exclusions", () => {
    const { table, keys } = tableOf(scenario);
    expect(keys).toHaveLength(7); // 8 combinations, one excluded
    expect(keys).not.toContain("a=a1|b=b0|c=c0");
    const rate = (phase: number, segment: number, key: string): number =>
      table.phases[phase]!.rates[segment * keys.length + keys.indexOf(key)]!;
    const base = logit(0.04);
    expect(rate(0, 0, "a=a0|b=b0|c=c0")).toBeCloseTo(0.04, 12);
    expect(rate(0, 0, "a=a1|b=b1|c=c1")).toBeCloseTo(sigmoid(base + 0.2 - 0.1 + 0.15 + 0.3), 12);
    expect(rate(0, 0, "a=a1|b=b1|c=c0")).toBeCloseTo(sigmoid(base + 0.2 + 0.15), 12);
    expect(rate(0, 1, "a=a1|b=b1|c=c1")).toBeCloseTo(sigmoid(base - 0.5 + 0.2 + 0.1 - 0.1 + 0.15 + 0.3), 12);
    expect(rate(0, 0, "a=a0|b=b0|c=c1")).toBe(0.09); // the override
    expect(table.phases[0]!.best[0]).toBe(0.09);
    expect(keys[table.phases[0]!.bestIndex[0]!]).toBe("a=a0|b=b0|c=c1");
    // The later phase replaces only the baseline and keeps the rest.
    expect(rate(1, 1, "a=a1|b=b1|c=c1")).toBeCloseTo(sigmoid(logit(0.02) - 0.5 + 0.2 + 0.1 - 0.1 + 0.15 + 0.3), 12);
    expect(phaseAt(table, 49)).toBe(table.phases[0]);
    expect(phaseAt(table, 50)).toBe(table.phases[1]);
  });

  it("rejects a `rates` key that is excluded, with an example of a valid key", () => {
    const bad = { ...scenario, truth: { ...scenario.truth, rates: { s: { "a=a1|b=b0|c=c0": 0.1 } } } };
    expect(() => tableOf(bad)).toThrow(/truth\.rates\.s.*not an allowed combination's key.*a=a0\|b=b0\|c=c0/);
  });
});
