import { describe, expect, it } from "vitest";
import { combinationKey, foldCycle, initialState, parseSettings, sitesOf, propensityOf, type RetiredEntry } from "../../src/model/index.ts";
import { computePosteriors } from "../../src/model/hierarchy.ts";
import { page } from "./engineFixtures.ts";

const DAY = 86_400_000;

describe("foldCycle", () => {
  it("leaves out the pooled \"*\" round on request only when no requested segment needs it, and changes nothing else", () => {
    // Each segment draws from its own stream (seed, segment key), so skipping "*" must leave every
    // other allocation and summary exactly as it was.
    const design = page([3, 2]);
    const settings = parseSettings({});
    const rows = ["a", "b"].flatMap((segment, i) => [
      { segment, combination: combinationKey(design, [1, 0]), n: 500, k: 20 + i },
      { segment, combination: combinationKey(design, [2, 1]), n: 500, k: 30 },
    ]);
    const input = { design, settings, state: initialState(design, settings), rows, now: 0, retired: [], seed: 4 };
    const full = foldCycle({ ...input, segments: ["a", "b"] });
    const lean = foldCycle({ ...input, segments: ["a", "b"], pooled: false });
    expect(Object.keys(lean.allocations).sort()).toEqual(["a", "b"]);
    expect(lean.allocations.a).toEqual(full.allocations.a);
    expect(lean.summaries.b).toEqual(full.summaries.b);
    const unseen = foldCycle({ ...input, segments: ["a", "b", "c"], pooled: false });
    expect(unseen.allocations.c.keys).toEqual(full.allocations["*"].keys);
  });

  it("reports in every summary the segment spread its posteriors were computed with", () => {
    const design = page([3, 2]);
    const settings = parseSettings({});
    const rows = ["a", "b"].flatMap((segment, i) => [
      { segment, combination: combinationKey(design, [1, 0]), n: 5000, k: i === 0 ? 100 : 300 },
      { segment, combination: combinationKey(design, [2, 1]), n: 5000, k: i === 0 ? 300 : 100 },
    ]);
    const out = foldCycle({ design, settings, state: initialState(design, settings), rows, now: 0, retired: [], seed: 4, segments: ["a", "b"] });
    const expected = computePosteriors(design, settings, sitesOf(out.state)).segmentSpread;
    // Opposite winners in a and b: the spread must have left the setting for this to mean anything.
    expect(expected).toBeGreaterThan(settings.segmentSpread);
    for (const s of ["a", "b", "*"]) expect(out.summaries[s].segmentSpread).toBe(expected);
    // kept in the state: reports and the next fold's update use it, the next search starts there
    expect(out.state.segmentSpread).toBe(expected);
  });

  it("retires a dominated combination after retireAfterFolds folds and reinstates it after forgetting", () => {
    // Rules from DESIGN.md "Retired": P(best) < retireProbability for retireAfterFolds consecutive
    // folds and upper bound < the leader's lower bound; forgetting can bring it back, recorded.
    const design = page([3]);
    const settings = parseSettings({ retireAfterFolds: 3, halfLifeDays: 1, baselineShare: 0.05 });
    const key = (l: number) => combinationKey(design, [l]);
    const rows = [
      { segment: "s", combination: key(0), n: 20000, k: 600 },
      { segment: "s", combination: key(1), n: 20000, k: 400 },
      { segment: "s", combination: key(2), n: 20000, k: 1200 },
    ];
    let state = initialState(design, settings);
    let retired: RetiredEntry[] = [];
    let out = foldCycle({ design, settings, state, rows, now: 0, segments: ["s"], retired, seed: 1 });
    for (let fold = 1; fold <= 3; fold++) {
      const active = out.retired.filter((r) => r.segment === "s" && r.reinstatedAt === null);
      expect(active).toHaveLength(fold < 3 ? 0 : 2);
      state = out.state;
      retired = out.retired;
      if (fold < 3) out = foldCycle({ design, settings, state, rows: [], now: fold * 60_000, segments: ["s"], retired, seed: 1 + fold });
    }
    const entry = out.retired.find((r) => r.segment === "s" && r.combination === key(1))!;
    expect(entry.reason).toBe("dominated");
    expect(entry.retiredAt).toBe(120_000);
    expect(entry.figures.folds).toBe(3);
    expect(entry.figures.probabilityBest).toBeLessThan(settings.retireProbability);
    expect(entry.figures.upper).toBeLessThan(entry.figures.leaderLower);
    expect(entry.figures.leader).toBe(key(2));
    // Retired: no longer served; the baseline (also dominated) keeps exactly its baseline share.
    expect(propensityOf(out.allocations.s, key(1))).toBe(0);
    expect(propensityOf(out.allocations.s, key(0))).toBeCloseTo(settings.baselineShare, 12);
    // 30 half-lives later the data weigh 2^-30: the posterior is back near the prior and overlaps.
    const later = foldCycle({ design, settings, state: out.state, rows: [], now: 120_000 + 30 * DAY, segments: ["s"], retired: out.retired, seed: 9 });
    const back = later.retired.find((r) => r.segment === "s" && r.combination === key(1))!;
    expect(back.reinstatedAt).toBe(120_000 + 30 * DAY);
    // (by probability: by the bound it would take retireAfterFolds folds in a row)
    expect(back.reinstateReason).toMatch(/probability of being best rose/);
    expect(propensityOf(later.allocations.s, key(1))).toBeGreaterThan(0);
  });

  it("settles by probability with a clear winner, and by expected loss when the top two are equal", () => {
    // DESIGN.md "Settled": P(best) ≥ settleProbability, or expected loss ≤ settleLossFraction × leader rate.
    const design = page([2]);
    const settings = parseSettings({});
    const key = (l: number) => combinationKey(design, [l]);
    const clear = foldCycle({ design, settings, state: initialState(design), rows: [
      { segment: "s", combination: key(0), n: 50000, k: 1500 },
      { segment: "s", combination: key(1), n: 50000, k: 2500 },
    ], now: 0, segments: ["s"], retired: [], seed: 1 });
    expect(clear.summaries.s).toMatchObject({ status: "settled", settledBy: "probability" });
    expect(clear.summaries.s.leader.combination).toBe(key(1));
    const tie = foldCycle({ design, settings, state: initialState(design), rows: [
      { segment: "s", combination: key(0), n: 2e6, k: 1e5 },
      { segment: "s", combination: key(1), n: 2e6, k: 1e5 },
    ], now: 0, segments: ["s"], retired: [], seed: 1 });
    expect(tie.summaries.s.leader.probabilityBest).toBeLessThan(settings.settleProbability);
    expect(tie.summaries.s).toMatchObject({ status: "settled", settledBy: "loss" });
    expect(tie.summaries.s.expectedLossFraction).toBeLessThanOrEqual(settings.settleLossFraction);
    const fresh = foldCycle({ design, settings, state: initialState(design), rows: [], now: 0, segments: ["s"], retired: [], seed: 1 });
    expect(fresh.summaries.s).toMatchObject({ status: "exploring", settledBy: null });
  });

  it("is reproducible from the seed and independent of the order of segments", () => {
    const design = page([3, 2]);
    const settings = parseSettings({});
    const rows = ["a", "b"].flatMap((segment, i) => [0, 1, 2].map((l) => ({ segment, combination: combinationKey(design, [l, i]), n: 1000, k: 30 + 10 * l })));
    const run = (segments: string[], seed: number) => foldCycle({ design, settings, state: initialState(design), rows, now: 0, segments, retired: [], seed });
    const one = run(["a", "b"], 5);
    expect(JSON.stringify(run(["b", "a"], 5).allocations.a)).toBe(JSON.stringify(one.allocations.a));
    expect(JSON.stringify(run(["a", "b"], 5).summaries)).toBe(JSON.stringify(one.summaries));
    expect(JSON.stringify(run(["a", "b"], 6).summaries.a)).not.toBe(JSON.stringify(one.summaries.a));
  });

  it("serves unseen segments and segments beyond maxSegments from the pooled model", () => {
    const design = page([2, 2]);
    const settings = parseSettings({ maxSegments: 1 });
    const rows = [
      { segment: "big", combination: combinationKey(design, [1, 1]), n: 5000, k: 300 },
      { segment: "small", combination: combinationKey(design, [1, 1]), n: 100, k: 6 },
    ];
    const out = foldCycle({ design, settings, state: initialState(design), rows, now: 0, segments: ["big", "small", "new"], retired: [], seed: 1 });
    expect([...out.state.segments.keys()].sort()).toEqual(["*", "big"]);
    expect(out.allocations.small.keys).toEqual(out.allocations["*"].keys);
    expect(out.allocations.small.propensities).toEqual(out.allocations["*"].propensities);
    expect(out.summaries.new.segment).toBe("new");
    expect(out.summaries.big.leader.rate).not.toEqual(out.summaries["*"].leader.rate);
  });
});
