import { describe, expect, it } from "vitest";
import { combinationKey, createRng, foldState, initialState, parseSettings, sitesOf } from "../../src/model/index.ts";
import { computePosteriors, logEvidence, segmentSpreads } from "../../src/model/hierarchy.ts";
import { priorFor } from "../../src/model/prior.ts";
import { logScaleHyperprior, SCALE_MULTIPLES, searchPriorScales, type PriorScales } from "../../src/model/priorScaleSearch.ts";
import { page } from "./engineFixtures.ts";

/** Every pair on the grid, scored as the search scores them: the exhaustive search the walk stands in for. */
function gridBest(score: (scales: PriorScales) => number, interactions: boolean): PriorScales {
  let best: { scales: PriorScales; score: number } | null = null;
  for (const main of SCALE_MULTIPLES) {
    for (const interaction of interactions ? SCALE_MULTIPLES : [1]) {
      const scales = { main, interaction };
      const s = score(scales) + logScaleHyperprior(scales);
      if (best === null || s > best.score) best = { scales, score: s };
    }
  }
  return best!.scales;
}

describe("the prior-scale walk", () => {
  it("reaches the peak of a single-peaked score from every start, with fewer evaluations than the grid", () => {
    const grid = SCALE_MULTIPLES.length;
    for (let pi = 0; pi < grid; pi++) {
      for (let pj = 0; pj < grid; pj++) {
        // A concave score in log₂ of the multiples, peaked at grid point (pi, pj), steep enough that the hyperprior does not move the peak.
        const score = ({ main, interaction }: PriorScales) => -10 * ((Math.log2(main) - pi) ** 2 + (Math.log2(interaction) - pj) ** 2);
        for (const start of [{ main: 1, interaction: 1 }, { main: 16, interaction: 16 }, { main: 4, interaction: 2 }]) {
          let evaluations = 0;
          const found = searchPriorScales((s) => (evaluations++, { logEvidence: score(s) }), true, start);
          expect(found.scales).toEqual({ main: 2 ** pi, interaction: 2 ** pj });
          expect(found.value.logEvidence).toBe(score(found.scales));
          expect(evaluations).toBeLessThan(grid * grid);
        }
      }
    }
  });

  it("varies only the main-effect scale on a page without interactions", () => {
    const seen: PriorScales[] = [];
    const found = searchPriorScales((s) => (seen.push(s), { logEvidence: -10 * (Math.log2(s.main) - 3) ** 2 }), false);
    expect(found.scales).toEqual({ main: 8, interaction: 1 });
    expect(seen.every((s) => s.interaction === 1)).toBe(true);
  });

  // The walk is exact only when the score has one peak on the grid, which the marginal likelihood
  // does not guarantee: check it against the exhaustive search on fitted pages with small and large
  // interactions (the exhaustive search is the reference; pages invented, sizes as in the
  // coverage bench's interaction scenario).
  for (const [seed, interactionSize] of [[1, 0.1], [2, 0.6], [3, 1.2], [4, 1.5], [5, 0.3]] as const) {
    it(`picks the exhaustive search's scales on a fitted page (seed ${seed}, interactions up to ${interactionSize} log-odds)`, () => {
      const design = page([3, 3, 2]);
      const settings = parseSettings({});
      const rng = createRng(seed);
      const main = design.factors.map((f) => f.levels.map((_, l) => (l === 0 ? 0 : (rng.next() - 0.5) * 0.8)));
      const pair = new Map<string, number>();
      const rows = ["a", "b", "c"].flatMap((segment) =>
        [0, 1, 2].flatMap((x) => [0, 1, 2].flatMap((y) => [0, 1].map((z) => {
          const key = `${x}${y}`;
          if (!pair.has(key)) pair.set(key, x > 0 && y > 0 ? (rng.next() * 2 - 1) * interactionSize : 0);
          const eta = -2.5 + main[0][x] + main[1][y] + main[2][z] + pair.get(key)!;
          const n = 3000;
          let k = 0;
          for (let i = 0; i < n; i++) if (rng.next() < 1 / (1 + Math.exp(-eta))) k++;
          return { segment, combination: combinationKey(design, [x, y, z]), n, k };
        }))),
      );
      const state = foldState({ design, settings, state: initialState(design), rows, now: 0 }).state;
      const sites = sitesOf(state);
      for (const start of [null, { main: 16, interaction: 16 }]) {
        const post = computePosteriors(design, settings, sites, undefined, { tau: state.segmentSpread, scales: start, learn: true });
        const spread = segmentSpreads(design, settings, post.segmentSpread);
        const best = gridBest((scales) => logEvidence(design.dimension, priorFor(design, settings, scales), sites, spread), true);
        expect(post.priorScales).toEqual(best);
      }
    });
  }
});
