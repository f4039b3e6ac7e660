import { CholeskyDecomposition, inverse, Matrix } from "ml-matrix";
import { describe, expect, it } from "vitest";
import { createRng } from "../../src/model/index.ts";
import { cholesky, choleskyInverse, choleskySolve, covarianceFromCholesky, factorSpd, inverseDiagonal } from "../../src/model/linalg.ts";

/** A random symmetric positive-definite matrix A = BᵀB + I. */
function spd(d: number, seed: number): Float64Array {
  const rng = createRng(seed);
  const b = Array.from({ length: d }, () => Array.from({ length: d }, () => rng.normal()));
  const a = new Float64Array(d * d);
  for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) {
    let s = i === j ? 1 : 0;
    for (let k = 0; k < d; k++) s += b[k][i] * b[k][j];
    a[i * d + j] = s;
  }
  return a;
}

describe("dense SPD linear algebra agrees with ml-matrix (reference library)", () => {
  it("Cholesky factor, solve, inverse (both ways) and inverse diagonal", () => {
    for (const d of [1, 5, 40]) {
      const a = spd(d, d);
      const rows = Array.from({ length: d }, (_, i) => Array.from(a.subarray(i * d, i * d + d)));
      const ref = new CholeskyDecomposition(new Matrix(rows)).lowerTriangularMatrix;
      const l = cholesky(a, d)!;
      for (let i = 0; i < d; i++) for (let j = 0; j <= i; j++) expect(l[i * d + j]).toBeCloseTo(ref.get(i, j), 9);
      const rhs = Array.from({ length: d }, (_, i) => i - d / 2);
      const x = choleskySolve(l, d, rhs);
      const refX = new CholeskyDecomposition(new Matrix(rows)).solve(Matrix.columnVector(rhs));
      for (let i = 0; i < d; i++) expect(x[i]).toBeCloseTo(refX.get(i, 0), 8);
      const inv = choleskyInverse(l, d);
      const refInv = inverse(new Matrix(rows));
      const diag = inverseDiagonal(l, d);
      const covariance = covarianceFromCholesky(l, d);
      for (let i = 0; i < d; i++) {
        expect(diag[i]).toBeCloseTo(refInv.get(i, i), 10);
        for (let j = 0; j < d; j++) expect(inv[i * d + j]).toBeCloseTo(refInv.get(i, j), 10);
        for (let j = 0; j < d; j++) expect(covariance[i * d + j]).toBeCloseTo(refInv.get(i, j), 10);
      }
    }
  });

  it("gives the same factor and inverse when written into reused work buffers", () => {
    // Buffers left dirty by an earlier, different matrix (as widen's are between calls).
    const d = 12;
    const out = new Float64Array(d * d).fill(7);
    const work = new Float64Array(d * d).fill(-3);
    for (const seed of [1, 2]) {
      const a = spd(d, seed);
      const l = cholesky(a, d, out)!;
      expect(l).toBe(out);
      expect([...l]).toEqual([...cholesky(a, d)!]);
      expect([...factorSpd(a.slice(), d, "test", out)]).toEqual([...cholesky(a, d)!]);
      expect([...covarianceFromCholesky(l, d, work)]).toEqual([...covarianceFromCholesky(cholesky(a, d)!, d)]);
    }
  });

  it("returns null for a matrix that is not positive definite", () => {
    expect(cholesky(Float64Array.from([1, 2, 2, 1]), 2)).toBeNull();
  });
});
