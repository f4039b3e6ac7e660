import { describe, expect, it } from "vitest";
import { createRng } from "../../src/model/index.ts";
import { jStat } from "./engineFixtures.ts";

describe("createRng", () => {
  it("is reproducible from the seed and differs between seeds", () => {
    const a = createRng(42), b = createRng(42), c = createRng(43);
    const xs = Array.from({ length: 5 }, () => a.next());
    expect(Array.from({ length: 5 }, () => b.next())).toEqual(xs);
    expect(Array.from({ length: 5 }, () => c.next())).not.toEqual(xs);
  });

  it("gives uniforms that pass a chi-square test over 20 equal bins", () => {
    // Pearson's X² with 19 degrees of freedom; critical value at α = 0.001 from jStat.
    const rng = createRng(1);
    const bins = new Array(20).fill(0);
    const n = 200_000;
    for (let i = 0; i < n; i++) bins[Math.floor(rng.next() * 20)]++;
    const x2 = bins.reduce((acc, o) => acc + (o - n / 20) ** 2 / (n / 20), 0);
    expect(x2).toBeLessThan(jStat.chisquare.inv(0.999, 19));
    for (let i = 0; i < 1000; i++) {
      const k = rng.int(7);
      expect(Number.isInteger(k) && k >= 0 && k < 7).toBe(true);
    }
  });

  it("gives normals that pass a chi-square test over standard-normal decile bins", () => {
    // Bin edges are the N(0,1) deciles from jStat.normal.inv; each bin should hold 10%.
    const rng = createRng(2);
    const edges = Array.from({ length: 9 }, (_, i) => jStat.normal.inv((i + 1) / 10, 0, 1));
    const bins = new Array(10).fill(0);
    const n = 200_000;
    let sum = 0, sq = 0;
    for (let i = 0; i < n; i++) {
      const z = rng.normal();
      sum += z;
      sq += z * z;
      let b = 0;
      while (b < 9 && z > edges[b]) b++;
      bins[b]++;
    }
    const x2 = bins.reduce((acc, o) => acc + (o - n / 10) ** 2 / (n / 10), 0);
    expect(x2).toBeLessThan(jStat.chisquare.inv(0.999, 9));
    expect(Math.abs(sum / n)).toBeLessThan(4 / Math.sqrt(n)); // sd of the mean is 1/√n
    expect(Math.abs(sq / n - 1)).toBeLessThan(4 * Math.sqrt(2 / n)); // sd of the mean square is √(2/n)
  });
});
