import { inverse, Matrix, solve } from "ml-matrix";
import { describe, expect, it } from "vitest";
import { combinationKey, createRng, foldState, initialState, parseSettings } from "../../src/model/index.ts";
import { computePosteriors, widen } from "../../src/model/hierarchy.ts";
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
  it("equals (A⁻¹ + T)⁻¹ and (I + AT)⁻¹v computed by ml-matrix (reference library)", () => {
    const d = 6;
    const a = randomSpd(d, 1);
    const spread = Float64Array.from([1, 0.25, 0.25, 0.5, 0, 0.25]);
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
    const post = computePosteriors(design, settings, state.sites);
    const onlyA = computePosteriors(design, settings, new Map([["a", state.sites.get("a")!]]));
    // Segment b's data move a's posterior (borrowing strength) but a's own data dominate it.
    const j = design.featureNames.indexOf("f0=l1");
    const truthEffect = Math.log((0.06 / 0.94) / (0.04 / 0.96));
    expect(Math.abs(post.segments.get("a")!.mean[j] - truthEffect)).toBeLessThan(0.15);
    expect(post.segments.get("a")!.precision[j * design.dimension + j]).toBeGreaterThan(onlyA.segments.get("a")!.precision[j * design.dimension + j]);
  });
});
