import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import {
  buildDesign,
  combinationKey,
  createRng,
  deserializeState,
  foldCycle,
  foldState,
  initialState,
  parseSettings,
  remapState,
  serializeState,
  sitesOf,
  type Design,
  type FoldRow,
  type PageDefinition,
} from "../../src/model/index.ts";
import { computePosteriors } from "../../src/model/hierarchy.ts";
import { rekey } from "../../src/model/combinationKey.ts";
import { featureMapping } from "../../src/model/remap.ts";

const settings = parseSettings({});
const base: PageDefinition = {
  factors: [
    { name: "headline", levels: [{ name: "plain" }, { name: "question" }, { name: "proof" }] },
    { name: "hero", levels: [{ name: "photo" }, { name: "farm" }] },
    { name: "cta", levels: [{ name: "buy" }, { name: "try" }] },
  ],
};

/** Uniform traffic over the design's combinations with rates from a made-up truth (a workload). */
function traffic(design: Design, rate: (levels: Record<string, string>) => number, visitors: number, seed: number): FoldRow[] {
  const rng = createRng(seed);
  const rows: FoldRow[] = [];
  for (let i = 0; i < visitors; i++) {
    const c = design.factors.map((f) => rng.int(f.levels.length));
    const named = Object.fromEntries(design.factors.map((f, j) => [f.name, f.levels[c[j]]]));
    rows.push({ segment: "s", combination: combinationKey(design, c), n: 1, k: rng.next() < rate(named) ? 1 : 0 });
  }
  return rows;
}

const truth = (l: Record<string, string>) => 1 / (1 + Math.exp(-(-3 + (l.headline === "question" ? 0.3 : 0) + (l.headline === "proof" ? 1.2 : 0) + (l.hero === "farm" ? -0.2 : 0))));

describe("state", () => {
  it("serialises to JSON and back without loss", () => {
    const design = buildDesign(base);
    const state = foldState({ design, settings, state: initialState(design, settings), rows: traffic(design, truth, 3000, 1), now: 5 }).state;
    const back = deserializeState(JSON.parse(JSON.stringify(serializeState(state))), design);
    expect(back.lastFoldAt).toBe(5);
    const [a, b] = [state.segments.get("s")!, back.segments.get("s")!];
    expect(b.counts.keys).toEqual(a.counts.keys);
    expect([...b.counts.n]).toEqual([...a.counts.n]);
    expect([...b.mode]).toEqual([...a.mode]);
    // The site is derived from counts and mode, so it comes back bit for bit.
    expect([...sitesOf(back).get("s")!.lambda]).toEqual([...sitesOf(state).get("s")!.lambda]);
    expect([...sitesOf(back).get("s")!.eta]).toEqual([...sitesOf(state).get("s")!.eta]);
  });

  it("keeps the learned segment spread, and reads a missing one as null", () => {
    const design = buildDesign(base);
    const state = { ...initialState(design, settings), segmentSpread: 0.0707 };
    expect(deserializeState(JSON.parse(JSON.stringify(serializeState(state))), design).segmentSpread).toBe(0.0707);
    const { segmentSpread: _, ...older } = serializeState(state);
    expect(deserializeState(older, design).segmentSpread).toBeNull();
    expect(() => deserializeState({ ...older, segmentSpread: -1 }, design)).toThrowError(/segmentSpread must be a non-negative number/);
  });

  it("rejects a malformed stored state, a version-1 snapshot and a state of another definition", () => {
    const design = buildDesign(base);
    expect(() => deserializeState({ version: 3 }, design)).toThrowError(FacetwiseError);
    expect(() => deserializeState({ version: 1, featureNames: design.featureNames, sites: [] }, design)).toThrowError(/rebuild it from the stored picks/);
    const good = serializeState(foldState({ design, settings, state: initialState(design, settings), rows: traffic(design, truth, 500, 4), now: 0 }).state);
    const bad = { ...good, segments: good.segments.map((g) => ({ ...g, combinations: g.combinations.map(() => "headline=nope|hero=farm|cta=go") })) };
    expect(() => deserializeState(bad, design)).toThrowError(/not on the page/);
    const other = buildDesign({ factors: base.factors.slice(0, 2) });
    expect(() => deserializeState(good, other)).toThrowError(/different page definition/);
    expect(() => foldCycle({ design: other, settings, state: initialState(design), rows: [], now: 0, segments: [], retired: [], seed: 1 })).toThrowError(/different page definition/);
  });
});

/**
 * A page edit re-keys the counts (remap.ts). After the refit that follows every edit, the model
 * must be exactly the fit of the same visitors on the new page — checked against folding the
 * re-keyed rows directly into a fresh state of the new design (the same optimisation problem, so
 * agreement to Newton's tolerance; no outside source needed beyond that identity).
 */
describe("remapState", () => {
  const refitted = (design: Design, state: ReturnType<typeof initialState>) =>
    computePosteriors(design, settings, sitesOf(foldState({ design, settings, state, rows: [], now: 0 }).state)).segments.get("s")!;
  const expectSameFit = (design: Design, a: ReturnType<typeof refitted>, b: ReturnType<typeof refitted>) => {
    const d = design.dimension;
    for (let i = 0; i < d; i++) expect(Math.abs(a.mean[i] - b.mean[i])).toBeLessThan(1e-4);
    // precisions reach ~10³ here: compare relative to size (refit tolerance 0.01 sd)
    for (let i = 0; i < d * d; i++) expect(Math.abs(a.precision[i] - b.precision[i])).toBeLessThan(1e-5 * (1 + Math.abs(b.precision[i])));
  };
  const rekeyRows = (design: Design, rows: FoldRow[]) => rows.flatMap((r) => {
    const combination = rekey(design, r.combination);
    return combination === null ? [] : [{ ...r, combination }];
  });

  for (const [what, edit] of [
    ["a level is added", (f: PageDefinition["factors"][number]) => (f.name === "hero" ? { ...f, levels: [...f.levels, { name: "video" }] } : f)],
    ["a level is removed", (f: PageDefinition["factors"][number]) => (f.name === "headline" ? { ...f, levels: f.levels.slice(0, 2) } : f)],
    ["a factor's reference level changes", (f: PageDefinition["factors"][number]) => (f.name === "cta" ? { ...f, levels: [...f.levels].reverse() } : f)],
  ] as const) {
    it(`gives the direct fit of the same visitors when ${what}`, () => {
      const design = buildDesign(base);
      const rows = traffic(design, truth, 20000, 2);
      const state = foldState({ design, settings, state: initialState(design, settings), rows, now: 0 }).state;
      const edited = buildDesign({ factors: base.factors.map(edit) });
      const remapped = remapState(state, design, edited, settings);
      const direct = foldState({ design: edited, settings, state: initialState(edited, settings), rows: rekeyRows(edited, rows), now: 0 }).state;
      expectSameFit(edited, refitted(edited, remapped), refitted(edited, direct));
    });
  }

  it("counts visitors from before a factor existed as its first level, and merges a removed factor", () => {
    const design = buildDesign(base);
    const rows = traffic(design, truth, 8000, 5);
    const state = foldState({ design, settings, state: initialState(design, settings), rows, now: 0 }).state;
    const grown = buildDesign({ factors: [...base.factors, { name: "badge", levels: [{ name: "none" }, { name: "ribbon" }] }] });
    const added = remapState(state, design, grown, settings).segments.get("s")!.counts;
    expect(added.keys.every((key) => key.endsWith("|badge=none"))).toBe(true);
    expect(added.visitors).toBeCloseTo(8000, 9);
    const shrunk = buildDesign({ factors: base.factors.filter((f) => f.name !== "cta") });
    const merged = remapState(state, design, shrunk, settings).segments.get("s")!.counts;
    expect(merged.keys.length).toBe(shrunk.factors.reduce((p, f) => p * f.levels.length, 1));
    expect(merged.visitors).toBeCloseTo(8000, 9);
  });

  it("maps no feature of a factor whose reference level changed, nor the intercept (the edit explanation's coefficients)", () => {
    const design = buildDesign(base);
    const reordered = buildDesign({ factors: base.factors.map((f) => (f.name === "cta" ? { ...f, levels: [...f.levels].reverse() } : f)) });
    const mapping = featureMapping(design, reordered);
    design.featureNames.forEach((name, i) => {
      const touchesCta = name.includes("cta=") || name === "(intercept)";
      expect(mapping[i] === -1).toBe(touchesCta);
    });
  });
});
