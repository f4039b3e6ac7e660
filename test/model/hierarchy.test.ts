import { inverse, Matrix, solve } from "ml-matrix";
import { describe, expect, it } from "vitest";
import { combinationKey, createRng, foldState, initialState, parseSettings, sitesOf } from "../../src/model/index.ts";
import { computePosteriors, logEvidence, widen } from "../../src/model/hierarchy.ts";
import { page } from "./engineFixtures.ts";

function randomSpd(d: number, seed: number, rank = d): Float64Array {
  const rng = createRng(seed);
  const b = Array.from({ length: rank }, () => Array.from({ length: d }, () => rng.normal()));
  const a = new Float64Array(d * d);
  for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) for (let k = 0; k < rank; k++) a[i * d + j] += b[k][i] * b[k][j];
  return a;
}
const toMatrix = (a: Float64Array, d: number) => new Matrix(Array.from({ length: d }, (_, i) => Array.from(a.subarray(i * d, i * d + d))));

describe("a site seen through the segment deviation", () => {
  // A zero spread takes the push-through path, positive spreads the S⁻¹(I − B⁻¹)S⁻¹ one.
  for (const spreads of [[1, 0.25, 0.25, 0.5, 0, 0.25], [1, 0.25, 0.25, 0.5, 0.01, 0.25]]) {
    it(`equals (A⁻¹ + T)⁻¹ and (I + AT)⁻¹v computed by ml-matrix (reference library), spreads ${spreads.join(", ")}`, () => {
      const d = 6;
      const a = randomSpd(d, 1);
      const spread = Float64Array.from(spreads);
      const v = Float64Array.from([1, -2, 0.5, 3, -1, 0]);
      const got = widen(a, d, spread, v, "test");
      const t = Matrix.diag(Array.from(spread, (s) => s * s));
      const ref = inverse(inverse(toMatrix(a, d)).add(t));
      const refV = solve(Matrix.eye(d).add(toMatrix(a, d).mmul(t)), Matrix.columnVector(Array.from(v)));
      for (let i = 0; i < d; i++) {
        expect(got.v[i]).toBeCloseTo(refV.get(i, 0), 9);
        for (let j = 0; j < d; j++) expect(got.m[i * d + j]).toBeCloseTo(ref.get(i, j), 9);
      }
    });
  }

  it("stays finite and bounded by T⁻¹ for a singular site", () => {
    // Eigenvalues of (Λ⁻¹ + τ²I)⁻¹ are λ/(1 + τ²λ) < 1/τ²; a rank-2 Λ has no inverse at all.
    const d = 5;
    const a = randomSpd(d, 2, 2).map((x) => x * 1e6);
    const got = widen(a, d, new Float64Array(d).fill(0.25), new Float64Array(d).fill(1), "test");
    expect([...got.m, ...got.v].every(Number.isFinite)).toBe(true);
    for (let i = 0; i < d; i++) expect(got.m[i * d + i]).toBeLessThan(16 + 1e-6);
  });
});

describe("pooled and segment posteriors", () => {
  it("give one segment alone the new-segment prior, and share evidence across segments", () => {
    const design = page([2, 2]);
    const settings = parseSettings({});
    const key = (c: number[]) => combinationKey(design, c);
    const rng = createRng(3);
    const rows = ["a", "b"].flatMap((segment) => [[0, 0], [1, 0], [0, 1], [1, 1]].map((c) => {
      let k = 0;
      for (let i = 0; i < 4000; i++) if (rng.next() < (c[0] === 1 ? 0.06 : 0.04)) k++;
      return { segment, combination: key(c), n: 4000, k };
    }));
    const state = foldState({ design, settings, state: initialState(design), rows, now: 0 }).state;
    const post = computePosteriors(design, settings, sitesOf(state));
    const onlyA = computePosteriors(design, settings, new Map([["a", sitesOf(state).get("a")!]]));
    // Segment b's data move a's posterior (borrowing strength) but a's own data dominate it.
    const j = design.featureNames.indexOf("f0=l1");
    const truthEffect = Math.log((0.06 / 0.94) / (0.04 / 0.96));
    expect(Math.abs(post.segments.get("a")!.mean[j] - truthEffect)).toBeLessThan(0.15);
    expect(post.segments.get("a")!.precision[j * design.dimension + j]).toBeGreaterThan(onlyA.segments.get("a")!.precision[j * design.dimension + j]);
  });
});

describe("log evidence of the sites under a segment spread", () => {
  // Eight schools (Gelman et al., Bayesian Data Analysis, 3rd ed. 2013, Table 5.2: estimated
  // effects y_j and standard errors σ_j; values from memory of the book). Each school is a
  // one-coefficient site exp(ηθ − ½Λθ²) with Λ = 1/σ², η = y/σ², and β gets a nearly flat prior,
  // so log Z(τ) must match the log of BDA eq. 5.21, p(τ | y) under a uniform p(τ), up to a constant.
  const y = [28, 8, -3, 7, -1, 1, 18, 12];
  const sigma = [15, 10, 16, 11, 9, 11, 10, 18];
  const sites = new Map(
    y.map((yj, j) => [
      `school ${j}`,
      { lambda: Float64Array.of(1 / sigma[j] ** 2), eta: Float64Array.of(yj / sigma[j] ** 2), visitors: 1, conversions: 0, folds: 1 },
    ]),
  );
  const flat = { precision: Float64Array.of(1e-12), precisionMean: Float64Array.of(0) };
  const bda521 = (tau: number): number => {
    const w = sigma.map((s) => 1 / (s * s + tau * tau));
    const sumW = w.reduce((a, b) => a + b, 0);
    const muHat = y.reduce((a, yj, j) => a + w[j] * yj, 0) / sumW;
    return -0.5 * Math.log(sumW) + y.reduce((a, yj, j) => a + 0.5 * Math.log(w[j]) - 0.5 * w[j] * (yj - muHat) ** 2, 0);
  };
  const ours = (tau: number): number => logEvidence(1, flat, sites, Float64Array.of(tau));

  it("matches BDA eq. 5.21 for the eight schools at every τ, up to one constant", () => {
    const taus = [0.5, 2, 5, 10, 20, 40];
    for (const tau of taus) expect(ours(tau) - ours(1)).toBeCloseTo(bda521(tau) - bda521(1), 6);
  });

  it("falls as τ grows for the eight schools, as BDA Figure 5.5 shows (mode at τ = 0)", () => {
    const values = [1, 5, 10, 20].map(ours);
    for (let i = 1; i < values.length; i++) expect(values[i]).toBeLessThan(values[i - 1]);
  });
});

describe("the learned segment spread", () => {
  // By construction (no outside source): two segments with the same truth must not learn a wider
  // spread than the setting; two whose effect differs by 0.8 in log-odds must learn a wider one.
  const design = page([2, 2]);
  const settings = parseSettings({});
  const sitesFor = (rateOf: (segment: string, c: number[]) => number) => {
    const rng = createRng(11);
    const rows = ["a", "b", "c"].flatMap((segment) =>
      [[0, 0], [1, 0], [0, 1], [1, 1]].map((c) => {
        const p = rateOf(segment, c);
        let k = 0;
        for (let i = 0; i < 20_000; i++) if (rng.next() < p) k++;
        return { segment, combination: combinationKey(design, c), n: 20_000, k };
      }),
    );
    return sitesOf(foldState({ design, settings, state: initialState(design), rows, now: 0 }).state);
  };
  const rate = (logit: number) => 1 / (1 + Math.exp(-logit));

  it("stays at or below the setting when segments agree", () => {
    const sites = sitesFor((_, c) => rate(-3 + 0.2 * c[0] + 0.1 * c[1]));
    expect(computePosteriors(design, settings, sites).segmentSpread).toBeLessThanOrEqual(settings.segmentSpread);
  });

  it("widens when one segment's effect has the opposite sign", () => {
    const sites = sitesFor((s, c) => rate(-3 + (s === "b" ? -0.4 : 0.4) * c[0] + 0.1 * c[1]));
    expect(computePosteriors(design, settings, sites).segmentSpread).toBeGreaterThan(settings.segmentSpread);
  });

  it("keeps the setting with a single segment, where τ is not identified", () => {
    const sites = sitesFor((s, c) => rate(-3 + (s === "b" ? -0.4 : 0.4) * c[0]));
    const one = new Map([["a", sites.get("a")!]]);
    expect(computePosteriors(design, settings, one).segmentSpread).toBe(settings.segmentSpread);
  });
});
