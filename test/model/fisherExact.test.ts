import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { fisherExact } from "../../src/model/fisherExact.ts";
import { jStat } from "./jstatReference.ts";

/** Reference p-values by summing jStat's hypergeometric pmf over the table's support. */
function reference(a: number, b: number, c: number, d: number) {
  const n = a + b + c + d;
  const r1 = a + b;
  const c1 = a + c;
  const pmf = (x: number) => jStat.hypgeom.pdf(x, n, r1, c1);
  const observed = pmf(a);
  let less = 0;
  let greater = 0;
  let twoSided = 0;
  for (let x = Math.max(0, c1 - (c + d)); x <= Math.min(r1, c1); x++) {
    const p = pmf(x);
    if (x <= a) less += p;
    if (x >= a) greater += p;
    if (p <= observed * (1 + 1e-7)) twoSided += p;
  }
  return { less, greater, twoSided };
}

describe("fisherExact", () => {
  it("reproduces Fisher's tea-tasting table", () => {
    // R. A. Fisher (1935), The Design of Experiments, ch. 2; Agresti (2002) Table 3.8:
    // [[3, 1], [1, 3]] has one-sided p = 17/70 and two-sided p = 34/70.
    const r = fisherExact(3, 1, 1, 3);
    expect(r.greater).toBeCloseTo(17 / 70, 14);
    expect(r.twoSided).toBeCloseTo(34 / 70, 14);
    expect(r.less).toBeCloseTo(69 / 70, 14); // 1 − P(A = 4) = 1 − 1/70
  });

  it("matches jStat's hypergeometric pmf summed, one- and two-sided", () => {
    // Reference: jstat 1.9.6 jStat.hypgeom.pdf, two-sided by summing tables no more probable than
    // the observed (Agresti 2002, §3.5). Tables with unequal margins so the two tails differ.
    const tables: [number, number, number, number][] = [
      [1, 9, 11, 3],
      [7, 2, 3, 8],
      [0, 12, 5, 7],
      [10, 90, 3, 97],
      [2, 30, 9, 25],
      [25, 475, 12, 488],
      [40, 960, 61, 939],
    ];
    for (const t of tables) {
      const got = fisherExact(...t);
      const want = reference(...t);
      expect(got.less).toBeCloseTo(want.less, 10);
      expect(got.greater).toBeCloseTo(want.greater, 10);
      expect(got.twoSided).toBeCloseTo(want.twoSided, 10);
    }
  });

  it("gives an exact small p-value for a clean split", () => {
    // Hand computation: [[5, 0], [0, 5]] is the most extreme table; P = 1 / C(10, 5) = 1/252 each side.
    const r = fisherExact(5, 0, 0, 5);
    expect(r.greater).toBeCloseTo(1 / 252, 15);
    expect(r.twoSided).toBeCloseTo(2 / 252, 15);
  });

  it("stays finite for page-sized tables and degenerate ones", () => {
    // A million visitors per arm: no factorials overflow; the small tail stays positive.
    const big = fisherExact(500, 999_500, 300, 999_700);
    expect(big.greater).toBeGreaterThan(0);
    expect(big.greater).toBeLessThan(1e-9);
    expect(big.twoSided).toBeGreaterThanOrEqual(big.greater);
    // No conversions anywhere, or no visitors: only one table is possible, every p is 1.
    expect(fisherExact(0, 10, 0, 10)).toEqual({ less: 1, greater: 1, twoSided: 1 });
    expect(fisherExact(0, 0, 0, 0)).toEqual({ less: 1, greater: 1, twoSided: 1 });
  });

  it("rejects negative or fractional counts", () => {
    expect(() => fisherExact(-1, 2, 3, 4)).toThrowError(FacetwiseError);
    expect(() => fisherExact(1, 2.5, 3, 4)).toThrowError(/whole number/);
  });
});
