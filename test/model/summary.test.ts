import { describe, expect, it } from "vitest";
import { combinationKey, foldCycle, initialState, parseSettings } from "../../src/model/index.ts";
import { jStat, page } from "./engineFixtures.ts";

describe("segment summary", () => {
  it("reports the odds ratio at first levels matching Woolf's interval under a flat prior", () => {
    // Woolf (1955), Ann. Hum. Genet. 19: log OR ± z·√(1/a + 1/b + 1/c + 1/d). With a flat prior and
    // plenty of data the Laplace posterior of the main effect reproduces it (z from jStat).
    const design = page([2, 2], { interactions: [] });
    const settings = parseSettings({ priorInterceptScale: 30, priorMainScale: 30, segmentSpread: 0.01 });
    const rows = [
      { segment: "s", combination: combinationKey(design, [0, 0]), n: 2000, k: 60 },
      { segment: "s", combination: combinationKey(design, [1, 0]), n: 2000, k: 90 },
      { segment: "s", combination: combinationKey(design, [0, 1]), n: 2000, k: 60 },
      { segment: "s", combination: combinationKey(design, [1, 1]), n: 2000, k: 90 },
    ];
    const out = foldCycle({ design, settings, state: initialState(design), rows, now: 0, segments: ["s"], retired: [], seed: 1 });
    const effect = out.summaries.s.effects[0];
    expect(effect).toMatchObject({ factor: "f0", reference: "l0" });
    const [a, b, c, d] = [180, 3820, 120, 3880]; // f0=l1: 180 of 4000 converted; f0=l0: 120 of 4000
    const logOr = Math.log((a / b) / (c / d));
    const se = Math.sqrt(1 / a + 1 / b + 1 / c + 1 / d);
    const z = jStat.normal.inv(0.975, 0, 1);
    const level = effect.levels[0];
    expect(level.level).toBe("l1");
    const or = level.oddsRatioAtFirstLevels;
    expect(Math.abs(Math.log(or.estimate) - logOr)).toBeLessThan(0.01);
    expect(Math.abs(Math.log(or.lower) - (logOr - z * se))).toBeLessThan(0.01);
    expect(Math.abs(Math.log(or.upper) - (logOr + z * se))).toBeLessThan(0.01);
    // f1 has no effect in these data: its odds ratio interval straddles 1, its average difference 0.
    const f1 = out.summaries.s.effects[1].levels[0];
    expect(f1.oddsRatioAtFirstLevels.lower).toBeLessThan(1);
    expect(f1.oddsRatioAtFirstLevels.upper).toBeGreaterThan(1);
    expect(f1.difference!.lower).toBeLessThan(0);
    expect(f1.difference!.upper).toBeGreaterThan(0);
  });

  it("computes expected loss against a numerical integral for two Beta-like arms", () => {
    // For two arms with independent rate posteriors, E[max(p0,p1) − p_leader] = E[(p_other − p_leader)⁺];
    // reference: ∫∫ (y − x)⁺ f_leader(x) f_other(y) by a midpoint rule on jStat Beta densities (flat prior).
    const design = page([2]);
    const settings = parseSettings({ samples: 20000, priorInterceptScale: 30, priorMainScale: 30, segmentSpread: 0.01 });
    const data = [[3000, 90], [3000, 105]];
    const rows = data.map(([n, k], l) => ({ segment: "s", combination: combinationKey(design, [l]), n, k }));
    const out = foldCycle({ design, settings, state: initialState(design), rows, now: 0, segments: ["s"], retired: [], seed: 4 });
    const s = out.summaries.s;
    expect(s.leader.combination).toBe(combinationKey(design, [1]));
    const [al, bl] = [106, 2896]; // leader: Beta(k+1, n−k+1)
    const [ao, bo] = [91, 2911];
    const grid = 1500, hi = 0.07, h = hi / grid;
    let loss = 0;
    for (let i = 0; i < grid; i++) {
      const x = (i + 0.5) * h;
      const fx = jStat.beta.pdf(x, al, bl);
      if (fx < 1e-12) continue;
      for (let j = i + 1; j < grid; j++) {
        const y = (j + 0.5) * h;
        loss += (y - x) * fx * jStat.beta.pdf(y, ao, bo) * h * h;
      }
    }
    // Measured 0.3% apart; Monte-Carlo relative sd of the estimate with M = 20,000 is about 1.5%.
    expect(Math.abs(s.expectedLoss - loss) / loss).toBeLessThan(0.05);
    expect(s.expectedLossFraction).toBeCloseTo(s.expectedLoss / s.leader.rate.mean, 12);
    expect(s.top.map((c) => c.combination)).toEqual([combinationKey(design, [1]), combinationKey(design, [0])]);
    expect(s.baseline.combination).toBe(combinationKey(design, [0]));
  });
});
