import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import {
  allowedCombinations,
  buildDesign,
  combinationKey,
  featureVector,
  isAllowed,
  parseCombinationKey,
  type PageDefinition,
} from "../../src/model/index.ts";
import { slotsInvolving, writeActiveFeatures } from "../../src/model/design.ts";
import { page } from "./engineFixtures.ts";

const landing: PageDefinition = {
  factors: [
    { name: "headline", levels: [{ name: "plain" }, { name: "question" }, { name: "proof" }] },
    { name: "hero", levels: [{ name: "photo" }, { name: "farm" }, { name: "video" }] },
    { name: "cta", levels: [{ name: "buy" }, { name: "try" }] },
    { name: "colour", levels: [{ name: "green" }, { name: "orange" }] },
    { name: "layout", levels: [{ name: "single" }, { name: "split" }] },
  ],
  exclude: [{ hero: "video", layout: "split" }],
};

function thrown(f: () => unknown): FacetwiseError {
  try {
    f();
  } catch (error) {
    expect(error).toBeInstanceOf(FacetwiseError);
    return error as FacetwiseError;
  }
  throw new Error("expected a FacetwiseError");
}

describe("buildDesign", () => {
  it("counts features by reference coding: 1 + Σ(L−1) + Σ_pairs (Li−1)(Lj−1)", () => {
    // Formula: treatment-contrast coding of a two-way interaction model (McCullagh & Nelder 1989, §3.5).
    const d = buildDesign(landing);
    const L = [3, 3, 2, 2, 2];
    let expected = 1 + L.reduce((a, l) => a + l - 1, 0);
    for (let i = 0; i < 5; i++) for (let j = i + 1; j < 5; j++) expected += (L[i] - 1) * (L[j] - 1);
    expect(d.dimension).toBe(expected);
    expect(d.totalCount).toBe(72);
    // The rule fixes 2 of 5 factors, so it excludes 72 / (3·2) = 12 combinations (product rule).
    expect(d.excludedCount).toBe(12);
    expect(d.allowedCount).toBe(60);
    expect(allowedCombinations(d)).toHaveLength(60);
  });

  it("encodes φ(c) with the reference levels as zeros", () => {
    const d = buildDesign(landing);
    const x = featureVector(d, parseCombinationKey(d, "headline=question|hero=photo|cta=try|colour=green|layout=single"));
    const on = d.featureNames.filter((_, i) => x[i] === 1);
    expect(on).toEqual(["(intercept)", "headline=question", "cta=try", "headline=question|cta=try"]);
  });

  it("round-trips canonical keys and rejects malformed ones naming the problem", () => {
    const d = buildDesign(landing);
    for (const c of allowedCombinations(d)) expect(parseCombinationKey(d, combinationKey(d, c))).toEqual(c);
    expect(thrown(() => parseCombinationKey(d, "headline=plain")).code).toBe("INVALID_COMBINATION_KEY");
    expect(thrown(() => parseCombinationKey(d, "headline=nope|hero=photo|cta=buy|colour=green|layout=single")).message).toContain('no level "nope"');
    expect(thrown(() => parseCombinationKey(d, "hero=photo|headline=plain|cta=buy|colour=green|layout=single")).message).toContain("headline=");
  });

  it("applies exclusion rules and picks the baseline", () => {
    const d = buildDesign(landing);
    expect(isAllowed(d, parseCombinationKey(d, "headline=plain|hero=video|cta=buy|colour=green|layout=split"))).toBe(false);
    expect(isAllowed(d, parseCombinationKey(d, "headline=plain|hero=video|cta=buy|colour=green|layout=single"))).toBe(true);
    expect(d.baseline).toEqual([0, 0, 0, 0, 0]);
    const excludedFirst = buildDesign({ ...landing, exclude: [{ headline: "plain", hero: "photo" }] });
    // First allowed in key order (first factor slowest): headline=plain, hero=farm, rest first levels.
    expect(excludedFirst.baseline).toEqual([0, 1, 0, 0, 0]);
  });

  it("counts large spaces by inclusion–exclusion", () => {
    // 21 binary factors: 2^21 combinations. Rule A fixes 2 factors (excludes 2^19), rule B fixes
    // 1 (2^20), both together fix 3 (2^18): |A ∪ B| = 2^19 + 2^20 − 2^18 (inclusion–exclusion).
    const d = page(Array(21).fill(2), { interactions: [], exclude: [{ f0: "l1", f1: "l1" }, { f2: "l1" }] });
    expect(d.totalCount).toBe(2 ** 21);
    expect(d.allowedCount).toBe(2 ** 21 - (2 ** 19 + 2 ** 20 - 2 ** 18));
    expect(d.enumerable).toBe(false);
    // Disjoint rules on the same factor never intersect: |A ∪ B| = |A| + |B|.
    const e = page(Array(21).fill(2), { interactions: [], exclude: [{ f0: "l0" , f1: "l1" }, { f0: "l1", f3: "l1" }] });
    expect(e.allowedCount).toBe(2 ** 21 - 2 ** 19 - 2 ** 19);
  });

  it("enables only the requested interaction pairs", () => {
    const d = buildDesign({ ...landing, interactions: [["hero", "headline"]] });
    expect(d.pairs).toEqual([[0, 1]]);
    expect(d.dimension).toBe(1 + 7 + 4);
  });
});

describe("which feature slots involve a factor", () => {
  // Checked against the encoding itself: a slot involves f exactly when changing f's level alone
  // changes the feature written there, and at f's reference level such a slot is the zero slot.
  for (const [label, design] of [["all pairs", page([3, 2, 4])], ["one pair", page([3, 2, 4], { interactions: [["f0", "f2"]] })]] as const) {
    it(`match the slots that change with the factor's level (${label})`, () => {
      const a = new Int32Array(design.activeCount);
      const b = new Int32Array(design.activeCount);
      const combos = allowedCombinations(design);
      design.factors.forEach((_, f) => {
        const involves = slotsInvolving(design, f);
        const changes = new Array<boolean>(design.activeCount).fill(false);
        for (const c of combos) {
          writeActiveFeatures(design, c, a, 0);
          for (let l = 0; l < design.sizes[f]; l++) {
            const other = c.slice();
            other[f] = l;
            writeActiveFeatures(design, other, b, 0);
            for (let k = 0; k < a.length; k++) if (a[k] !== b[k]) changes[k] = true;
          }
          if (c[f] === 0) for (let k = 0; k < a.length; k++) if (involves[k]) expect(a[k]).toBe(design.dimension);
        }
        expect([...involves].map(Boolean)).toEqual(changes);
      });
    });
  }
});

describe("invalid definitions are rejected with the typed error naming the part", () => {
  const two = [{ name: "a" }, { name: "b" }];
  const cases: [string, unknown, string, string][] = [
    ["no factors", { factors: [] }, "INVALID_DEFINITION", "factors"],
    ["not an object", null, "INVALID_DEFINITION", "factors"],
    ["a factor with one level", { factors: [{ name: "x", levels: [{ name: "a" }] }] }, "INVALID_DEFINITION", "factors[0].levels"],
    ["duplicate factor names", { factors: [{ name: "x", levels: two }, { name: "x", levels: two }] }, "INVALID_DEFINITION", "factors[1].name"],
    ["duplicate level names", { factors: [{ name: "x", levels: [{ name: "a" }, { name: "a" }] }] }, "INVALID_DEFINITION", "factors[0].levels[1].name"],
    ["a name with the key separator", { factors: [{ name: "x|y", levels: two }] }, "INVALID_DEFINITION", "factors[0].name"],
    ["an exclusion naming an unknown factor", { factors: [{ name: "x", levels: two }], exclude: [{ y: "a" }] }, "UNKNOWN_FACTOR", "exclude[0].y"],
    ["an exclusion naming an unknown level", { factors: [{ name: "x", levels: two }], exclude: [{ x: "c" }] }, "UNKNOWN_LEVEL", "exclude[0].x"],
    ["an empty exclusion", { factors: [{ name: "x", levels: two }], exclude: [{}] }, "INVALID_DEFINITION", "exclude[0]"],
    ["rules that exclude every combination", { factors: [{ name: "x", levels: two }], exclude: [{ x: "a" }, { x: "b" }] }, "INVALID_DEFINITION", "exclude"],
    ["an interaction with an unknown factor", { factors: [{ name: "x", levels: two }, { name: "y", levels: two }], interactions: [["x", "z"]] }, "UNKNOWN_FACTOR", "interactions[0][1]"],
    ["a factor paired with itself", { factors: [{ name: "x", levels: two }, { name: "y", levels: two }], interactions: [["x", "x"]] }, "INVALID_DEFINITION", "interactions[0]"],
    ["a repeated pair", { factors: [{ name: "x", levels: two }, { name: "y", levels: two }], interactions: [["x", "y"], ["y", "x"]] }, "INVALID_DEFINITION", "interactions[1]"],
  ];
  for (const [name, def, code, field] of cases) {
    it(name, () => {
      const error = thrown(() => buildDesign(def as PageDefinition));
      expect(error.code).toBe(code);
      expect(error.field).toBe(field);
      expect(error.message).not.toMatch(/\{\w+\}/);
    });
  }
});
