import { describe, expect, it } from "vitest";
import { addRows } from "../../src/model/addRows.ts";

describe("adding feature rows of feature-major draws", () => {
  // Feature j's row holds j·10 + s at draw s, so a sum of rows has a value known by hand:
  // Σ_j (10 j + s) over the chosen features j.
  const stride = 7;
  const features = 9;
  const samples = Float64Array.from({ length: features * stride }, (_, k) => 10 * Math.floor(k / stride) + (k % stride));

  // 0–6 rows covers no rows, the four-at-a-time pass alone, and the pass with each remainder.
  for (let m = 0; m <= 6; m++) {
    it(`adds ${m} row(s) to what is already there, over the first count entries only`, () => {
      const idx = Int32Array.from([99, 8, 3, 3, 0, 5, 1]); // offset 1 skips the 99
      const count = 5; // shorter than the stride: entries 5 and 6 of each row are not read
      const out = Float64Array.from({ length: count + 1 }, () => 1000);
      addRows(idx, 1, m, samples, stride, count, out);
      const chosen = [...idx.subarray(1, 1 + m)];
      for (let s = 0; s < count; s++) expect(out[s]).toBe(1000 + chosen.reduce((acc, j) => acc + 10 * j + s, 0));
      expect(out[count]).toBe(1000);
    });
  }
});
