import { describe, expect, it } from "vitest";
import { averageEffects, CONTEXT_LIMIT, EFFECT_DRAW_LIMIT } from "../../src/model/averageEffects.ts";
import { allowedCombinations } from "../../src/model/allowed.ts";
import { buildDesign, combinationKey, createRng, foldCycle, initialState, parseSettings } from "../../src/model/index.ts";
import { drawSamples } from "../../src/model/sampling.ts";
import { jStat, page } from "./engineFixtures.ts";
import { gaussian } from "./posteriorFixtures.ts";

const sigma = (x: number) => 1 / (1 + Math.exp(-x));
const normalPdf = (x: number, mean: number, sd: number) => (jStat.normal as unknown as { pdf(x: number, m: number, s: number): number }).pdf(x, mean, sd);

describe("average factor effects", () => {
  it("matches a hand computation on a 2×3 page with an exclusion and a known θ", () => {
    // θ (features: intercept, f0=l1, f1=l1, f1=l2, f0=l1|f1=l1, f0=l1|f1=l2) with posterior sd 1e-5,
    // so every draw is θ. f0=l1 never appears with f1=l2 (excluded), so its average runs over
    // f1 ∈ {l0, l1} only, and f1=l2 is compared with f1=l0 under f0=l0 only.
    const design = page([2, 3], { exclude: [{ f0: "l1", f1: "l2" }] });
    const theta = [-3, 0.4, -0.2, 0.3, 0.5, 0];
    const g = gaussian(theta, theta.map(() => 1e-5));
    const M = 200;
    const effects = averageEffects(design, drawSamples(g, design.dimension, M, createRng(1)), M, createRng(2));
    const f0l1 = effects[0][1]!;
    expect(f0l1.contexts).toBe(2);
    expect(f0l1.difference.mean).toBeCloseTo(((sigma(-2.6) - sigma(-3)) + (sigma(-2.3) - sigma(-3.2))) / 2, 5);
    expect(f0l1.relative.mean).toBeCloseTo((sigma(-2.6) + sigma(-2.3)) / (sigma(-3) + sigma(-3.2)) - 1, 4);
    expect(f0l1.difference.upper - f0l1.difference.lower).toBeLessThan(1e-5);
    const f1l1 = effects[1][1]!;
    expect(f1l1.contexts).toBe(2);
    expect(f1l1.difference.mean).toBeCloseTo(((sigma(-3.2) - sigma(-3)) + (sigma(-2.3) - sigma(-2.6))) / 2, 5);
    const f1l2 = effects[1][2]!;
    expect(f1l2.contexts).toBe(1);
    expect(f1l2.difference.mean).toBeCloseTo(sigma(-2.7) - sigma(-3), 5);
    expect(effects[0][0]).toBeNull();
  });

  it("agrees with normal integrals over the posterior (jStat): mean, interval and relative change", () => {
    // One factor, θ = (β₀, β₁). Mean: E[σ(β₀+β₁) − σ(β₀)] as a 2-D midpoint rule over jStat normal
    // densities; with β₀ ~ N(−2, 0.3²), β₁ ~ N(0.4, 0.2²) the draws' mean must be within 4 Monte-Carlo
    // standard errors. Interval: with β₀ known the difference is increasing in β₁, so its quantiles
    // are σ(β₀ + q) − σ(β₀) at β₁'s normal quantiles q.
    const design = page([2]);
    const M = 2000;
    const g = gaussian([-2, 0.4], [0.3, 0.2]);
    const effect = averageEffects(design, drawSamples(g, 2, M, createRng(3)), M, createRng(4))[0][1]!;
    let mean = 0;
    let square = 0;
    const steps = 400;
    const [ha, hb] = [(12 * 0.3) / steps, (12 * 0.2) / steps];
    for (let i = 0; i < steps; i++) {
      const a = -2 - 6 * 0.3 + (i + 0.5) * ha;
      const wa = normalPdf(a, -2, 0.3) * ha;
      for (let j = 0; j < steps; j++) {
        const b = 0.4 - 6 * 0.2 + (j + 0.5) * hb;
        const w = wa * normalPdf(b, 0.4, 0.2) * hb;
        const diff = sigma(a + b) - sigma(a);
        mean += w * diff;
        square += w * diff * diff;
      }
    }
    const se = Math.sqrt((square - mean * mean) / Math.min(M, EFFECT_DRAW_LIMIT));
    expect(Math.abs(effect.difference.mean - mean)).toBeLessThan(4 * se);

    const known = gaussian([-2, 0.4], [1e-6, 0.2]);
    const sharp = averageEffects(design, drawSamples(known, 2, M, createRng(5)), M, createRng(6))[0][1]!;
    const at = (p: number) => sigma(-2 + jStat.normal.inv(p, 0.4, 0.2)) - sigma(-2);
    // Sample-quantile error at 2.5% with 500 draws is about 0.0033 here (√(q(1−q)/n)/density): 3 of them.
    expect(Math.abs(sharp.difference.lower - at(0.025))).toBeLessThan(0.01);
    expect(Math.abs(sharp.difference.upper - at(0.975))).toBeLessThan(0.01);
    let relative = 0;
    for (let j = 0; j < steps; j++) {
      const b = 0.4 - 6 * 0.2 + (j + 0.5) * hb;
      relative += normalPdf(b, 0.4, 0.2) * hb * (sigma(-2 + b) / sigma(-2) - 1);
    }
    expect(Math.abs(sharp.relative.mean - relative)).toBeLessThan(0.01);
  });

  it("averages over drawn contexts when there are too many to list", () => {
    // 2 × 5 × 5 × 5 = 250 combinations: f0 has 125 contexts > CONTEXT_LIMIT (32). Main effects only and
    // a known θ, so the difference depends on the context only through the intercept shift; the
    // drawn average must match the exact average over all 125 contexts within a few percent.
    const design = page([2, 5, 5, 5], { interactions: [] });
    const theta = [-3, 0.5, 0.1, -0.1, 0.2, 0.3, 0.05, 0.15, -0.2, 0.1, 0, 0.25, -0.05, 0.1];
    expect(design.dimension).toBe(theta.length);
    const g = gaussian(theta, theta.map(() => 1e-5));
    const effect = averageEffects(design, drawSamples(g, design.dimension, 100, createRng(7)), 100, createRng(8))[0][1]!;
    expect(effect.contexts).toBe(CONTEXT_LIMIT);
    const shift = (f: number, l: number) => (l === 0 ? 0 : theta[2 + (f - 1) * 4 + (l - 1)]);
    let exact = 0;
    for (const c of allowedCombinations(design).filter((c) => c[0] === 0)) {
      const a = -3 + shift(1, c[1]) + shift(2, c[2]) + shift(3, c[3]);
      exact += (sigma(a + 0.5) - sigma(a)) / 125;
    }
    expect(Math.abs(effect.difference.mean - exact) / exact).toBeLessThan(0.05);
  });

  it("does not call every level unclear when one combination is far better (the demo's complaint)", () => {
    // A demo-like page: 5% baseline, small main effects, and one pair (price headline with the wheel
    // photo) worth +1.6 log-odds, so that combination converts at about 20–30% against 5%. Traffic as
    // an adaptive policy leaves it: most visits on the winner, 150 on every other combination.
    const design = buildDesign({
      factors: [
        { name: "headline", levels: [{ name: "fixed-today" }, { name: "pickup" }, { name: "price" }] },
        { name: "hero", levels: [{ name: "mechanic" }, { name: "wheel" }, { name: "commuter" }] },
        { name: "cta", levels: [{ name: "book" }, { name: "quote" }] },
        { name: "badge", levels: [{ name: "none" }, { name: "reviews" }] },
      ],
      exclude: [{ hero: "commuter", badge: "reviews" }],
    });
    const logit = (p: number) => Math.log(p / (1 - p));
    const truth = (c: number[]) => sigma(logit(0.05) + [0, 0.1, -0.1][c[0]] + [0, 0.05, -0.2][c[1]] + [0, 0.15][c[2]] + [0, 0.2][c[3]] + (c[0] === 2 && c[1] === 1 ? 1.6 : 0));
    const combos = allowedCombinations(design);
    const best = combos.reduce((a, b) => (truth(b) > truth(a) ? b : a));
    const rows = combos.map((c) => {
      const n = c === best ? 20000 : 150;
      return { segment: "search", combination: combinationKey(design, c), n, k: Math.round(n * truth(c)) };
    });
    const settings = parseSettings({});
    const out = foldCycle({ design, settings, state: initialState(design), rows, now: 0, segments: ["search"], retired: [], seed: 1 });
    const levels = out.summaries.search.effects.flatMap((e) => e.levels.map((l) => ({ factor: e.factor, ...l })));
    const clear = levels.filter((l) => l.difference!.lower > 0 || l.difference!.upper < 0);
    for (const l of levels) {
      console.log(`${l.factor}=${l.level}: ${(100 * l.difference!.mean).toFixed(2)} points (${(100 * l.difference!.lower).toFixed(2)} to ${(100 * l.difference!.upper).toFixed(2)}); odds ratio at first levels ${l.oddsRatioAtFirstLevels.lower.toFixed(2)}–${l.oddsRatioAtFirstLevels.upper.toFixed(2)}`);
    }
    expect(clear.length).toBeGreaterThan(0);
    const price = levels.find((l) => l.factor === "headline" && l.level === "price")!;
    const wheel = levels.find((l) => l.factor === "hero" && l.level === "wheel")!;
    expect(price.difference!.lower).toBeGreaterThan(0);
    expect(wheel.difference!.lower).toBeGreaterThan(0);
  });
});
