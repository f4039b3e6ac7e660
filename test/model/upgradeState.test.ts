import { describe, expect, it } from "vitest";
import { combinationKey, createRng, foldState, initialState, parseSettings, upgradeState, type FoldRow, type ModelState } from "../../src/model/index.ts";
import { page } from "./engineFixtures.ts";

/**
 * A version-1 snapshot held accumulated sites, which cannot give the counts back; upgradeState
 * replays the counts from the rows every past fold consumed (the stored picks) at the fold times.
 * Check, by construction (no outside source): the rebuilt state equals the state that folding the
 * same rows at the same times gives today — same counts after forgetting, same modes.
 */
const design = page([3, 2, 2]);
const DAY = 86_400_000;

function history(seed: number): { at: number; rows: FoldRow[] }[] {
  const rng = createRng(seed);
  return Array.from({ length: 12 }, (_, f) => ({
    at: f * DAY / 4,
    rows: ["search", "social", "mail"].flatMap((segment) => Array.from({ length: 40 }, () => {
      const c = [rng.int(3), rng.int(2), rng.int(2)];
      return { segment, combination: combinationKey(design, c), n: 1, k: rng.next() < 0.05 + 0.03 * c[0] ? 1 : 0 };
    })),
  }));
}

function legacyOf(state: ModelState) {
  // The header fields a version-1 snapshot shares with today's, plus its sites by segment name.
  return {
    version: 1, featureNames: state.featureNames, lastFoldAt: state.lastFoldAt, segmentSpread: state.segmentSpread,
    dominated: { search: { "f0=l1|f1=l0|f2=l0": 2 } },
    sites: [...state.segments.keys()].map((segment) => ({ segment, lambdaUpper: [], eta: [], visitors: 0, conversions: 0, folds: 0 })),
  };
}

describe("upgradeState", () => {
  for (const halfLifeDays of [null, 1]) {
    it(`rebuilds what folding the same rows gives (half-life ${halfLifeDays ?? "off"})`, () => {
      const settings = parseSettings({ halfLifeDays, maxSegments: 2 });
      const folds = history(halfLifeDays === null ? 3 : 4);
      let state = initialState(design, settings);
      for (const fold of folds) state = foldState({ design, settings, state, rows: fold.rows, now: fold.at }).state;
      const rebuilt = upgradeState(legacyOf(state), design, settings, folds);
      expect([...rebuilt.segments.keys()].sort()).toEqual([...state.segments.keys()].sort());
      // maxSegments 2: the third source went to the overflow segment, and the rebuild routes it there too
      expect(rebuilt.segments.has("*")).toBe(true);
      for (const [segment, data] of state.segments) {
        const other = rebuilt.segments.get(segment)!;
        const counts = (x: typeof data) => Object.fromEntries(x.counts.keys.map((key, r) => [key, [x.counts.n[r], x.counts.k[r]]]));
        const [a, b] = [counts(data), counts(other)];
        expect(Object.keys(b).sort()).toEqual(Object.keys(a).sort());
        for (const key of Object.keys(a)) {
          expect(b[key][0]).toBeCloseTo(a[key][0], 9);
          expect(b[key][1]).toBeCloseTo(a[key][1], 9);
        }
        // modes agree to the refit's convergence tolerance (0.01 posterior sd; sds here are ≈ 0.2–0.5)
        data.mode.forEach((v, i) => expect(Math.abs(other.mode[i] - v)).toBeLessThan(0.005));
      }
      expect(rebuilt.dominated.get("search")?.get("f0=l1|f1=l0|f2=l0")).toBe(2);
      expect(rebuilt.lastFoldAt).toBe(state.lastFoldAt);
    });
  }

  it("re-keys rows written before a page edit, and refuses a snapshot of another definition", () => {
    const settings = parseSettings({});
    const older = page([3, 2]); // the page before factor f2 was added
    const rows = [{ segment: "s", combination: combinationKey(older, [1, 0]), n: 10, k: 2 }];
    let state = initialState(design, settings);
    state = foldState({ design, settings, state, rows: [{ ...rows[0], combination: combinationKey(design, [1, 0, 0]) }], now: 0 }).state;
    const rebuilt = upgradeState(legacyOf(state), design, settings, [{ at: 0, rows }]);
    expect(rebuilt.segments.get("s")!.counts.keys).toEqual([combinationKey(design, [1, 0, 0])]);
    expect(() => upgradeState({ ...legacyOf(state), featureNames: ["(intercept)"] }, design, settings, [])).toThrowError(/different page definition/);
  });
});
