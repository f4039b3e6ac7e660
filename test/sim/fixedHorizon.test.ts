import { describe, expect, it } from "vitest";
import { fixedHorizon } from "../../src/sim/fixedHorizon.ts";

describe("fixedHorizon", () => {
  it("matches the textbook example: 10% vs 15%, α = 0.05 two-sided, power 0.8 → 686 per group", () => {
    // Fleiss, Levin & Paik (2003) §4.2, uncorrected formula: 686 per group (the example issue 4 cites).
    // Two arms, best 15%, mde 1/3 → the other arm at 10%; one comparison, one segment with all traffic.
    const h = fixedHorizon([0.15], [1], 2, 1 / 3);
    expect(h.visitors).toBe(2 * 686);
  });

  it("divides by the segment's share, Bonferroni-splits α over K − 1 comparisons and takes the worst segment", () => {
    const two = fixedHorizon([0.15, 0.15], [0.5, 0.5], 2, 1 / 3);
    expect(two.visitors).toBe(2 * 686 * 2);
    const three = fixedHorizon([0.15], [1], 3, 1 / 3);
    // α = 0.025 per comparison, two-sided: z_{0.9875} = 2.2414, z_{0.8} = 0.8416 (standard normal
    // table); by hand: (2.2414·√(2·0.125·0.875) + 0.8416·√(0.15·0.85 + 0.1·0.9))² / 0.05² = 830.4 → 831.
    expect(three.visitors).toBe(3 * 831);
  });

  it("reproduces the reference scenario's figure in issue 4 (16,464,480 visitors)", async () => {
    const { readFileSync } = await import("node:fs");
    const { parseScenario } = await import("../../src/sim/scenario.ts");
    const { setup } = await import("../../src/sim/setup.ts");
    const s = setup(parseScenario(JSON.parse(readFileSync(new URL("../scenarios/reference.json", import.meta.url), "utf8"))));
    const h = fixedHorizon(Array.from(s.table.phases[0]!.best), s.scenario.segments.map((x) => x.share), s.keys.length, 0.1);
    expect(h.visitors).toBe(16_464_480);
  });

  it("needs two combinations", () => {
    expect(() => fixedHorizon([0.1], [1], 1, 0.1)).toThrow(/at least two allowed combinations/);
  });
});
