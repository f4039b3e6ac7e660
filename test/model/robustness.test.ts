import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { combinationKey, combinationRates, foldCycle, initialState, parseSettings, type FoldCycleOutput } from "../../src/model/index.ts";
import { factorSpd } from "../../src/model/linalg.ts";
import { page } from "./engineFixtures.ts";

const design = page([3, 2, 2]);
const settings = parseSettings({});
const key = (c: number[]) => combinationKey(design, c);

function allFinite(out: FoldCycleOutput): boolean {
  const numbers: number[] = [];
  JSON.stringify(out.summaries, (_, v) => (typeof v === "number" && numbers.push(v), v));
  JSON.stringify(out.allocations, (_, v) => (typeof v === "number" && numbers.push(v), v));
  for (const data of out.state.segments.values()) numbers.push(...data.site.lambda, ...data.site.eta, ...data.mode);
  return numbers.every(Number.isFinite);
}

function fold(rows: { combination: string; n: number; k: number }[], state = initialState(design, settings)) {
  return foldCycle({ design, settings, state, rows: rows.map((r) => ({ segment: "s", ...r })), now: 0, segments: ["s"], retired: [], seed: 1 });
}

describe("numerical robustness", () => {
  it("handles an empty fold", () => {
    const out = fold([]);
    expect(allFinite(out)).toBe(true);
    expect(out.state.segments.size).toBe(0);
  });

  it("handles 10⁶ visitors of one combination with no conversions", () => {
    const out = fold([{ combination: key([1, 0, 1]), n: 1e6, k: 0 }]);
    expect(allFinite(out)).toBe(true);
    // Zero events in n = 10⁶ trials: under a flat prior the 95% upper bound is about 3/n ("rule of
    // three", Hanley & Lippman-Hand, JAMA 249(13), 1983). The engine's log-odds prior N(−3, 2²)
    // pulls the rate up (to ≈ 3·10⁻⁵ here), but it must stay far below 10⁻⁴ — finite, not NaN, not 0.
    const rate = combinationRates({ design, settings, state: out.state, segment: "s", combinations: [key([1, 0, 1])], seed: 1 })[key([1, 0, 1])];
    expect(rate.upper).toBeLessThan(1e-4);
    expect(rate.lower).toBeGreaterThan(0);
    expect(rate.mean).toBeLessThan(rate.upper);
  });

  it("handles rates of 0% and 100% and a single huge fold", () => {
    const out = fold([
      { combination: key([0, 0, 0]), n: 1e6, k: 1e6 },
      { combination: key([2, 1, 1]), n: 1e6, k: 0 },
      { combination: key([1, 1, 0]), n: 5e8, k: 2.5e7 },
    ]);
    expect(allFinite(out)).toBe(true);
    expect(out.summaries.s.leader.combination).toBe(key([0, 0, 0]));
    expect(out.summaries.s.leader.rate.mean).toBeGreaterThan(0.99);
    // 5·10⁸ visitors at 5%: the interval is tight around 0.05 (binomial sd ≈ 1e-5).
    const big = out.summaries.s.top.find((x) => x.combination === key([1, 1, 0]))!;
    expect(Math.abs(big.rate.mean - 0.05)).toBeLessThan(1e-3);
  });

  it("keeps learning after extreme folds (no NaN carried into the next fold)", () => {
    const first = fold([{ combination: key([0, 0, 0]), n: 1e6, k: 0 }]);
    const second = fold([{ combination: key([0, 0, 0]), n: 10, k: 10 }], first.state);
    expect(allFinite(second)).toBe(true);
  });

  it("rejects rows that cannot be counts", () => {
    // k > n is a valid row (conversions of trials folded earlier: fold.test.ts); k < 0 is not.
    for (const row of [{ n: 5, k: -1 }, { n: -1, k: 0 }, { n: NaN, k: 0 }, { n: 3, k: Infinity }, { n: "5" as unknown as number, k: 0 }]) {
      expect(() => fold([{ combination: key([0, 0, 0]), ...row }])).toThrowError(FacetwiseError);
      try {
        fold([{ combination: key([0, 0, 0]), ...row }]);
      } catch (error) {
        expect((error as FacetwiseError).code).toBe("INVALID_FOLD_ROW");
      }
    }
  });

  it("skips and counts rows of combinations the design no longer has", () => {
    const out = fold([{ combination: "f0=l9|f1=l0|f2=l0", n: 10, k: 1 }, { combination: key([0, 0, 0]), n: 10, k: 1 }]);
    expect(out.skipped).toEqual({ rows: 1, visitors: 10 });
  });
});

describe("positive-definite checks", () => {
  it("repairs a slightly asymmetric, round-off indefinite matrix", () => {
    // [[1, 1], [1, 1]] is singular (eigenvalues 0 and 2); a 1e-13 perturbation makes it indefinite.
    const a = Float64Array.from([1, 1 + 1e-13, 1, 1 - 1e-13]);
    const l = factorSpd(a, 2, "test");
    expect([...l].every(Number.isFinite)).toBe(true);
    expect(l[0] * l[0]).toBeCloseTo(1, 6);
  });

  it("refuses a clearly indefinite or non-finite matrix with NUMERICAL_FAILURE", () => {
    for (const a of [[1, 2, 2, 1], [1, 0, 0, NaN], [-1, 0, 0, -1]]) {
      try {
        factorSpd(Float64Array.from(a), 2, "test");
        throw new Error("expected a failure");
      } catch (error) {
        expect((error as FacetwiseError).code).toBe("NUMERICAL_FAILURE");
      }
    }
  });
});
