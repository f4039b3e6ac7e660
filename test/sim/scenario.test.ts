import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { parseScenario } from "../../src/sim/scenario.ts";

const reference = JSON.parse(readFileSync(new URL("../scenarios/reference.json", import.meta.url), "utf8"));

function errorOf(input: unknown): FacetwiseError {
  try {
    parseScenario(input);
  } catch (error) {
    return error as FacetwiseError;
  }
  throw new Error("expected an error");
}

const small = {
  name: "small",
  factors: [
    { name: "headline", levels: ["a", "b"] },
    { name: "hero", levels: ["x", "y", "z"] },
  ],
  segments: [
    { name: "s1", share: 0.5 },
    { name: "s2", share: 0.5 },
  ],
  truth: { baseline: 0.05 },
};

describe("parseScenario", () => {
  // Expected values: DESIGN.md "Scenario files" and the defaults stated in src/sim/scenario.ts.
  it("reads the reference scenario and fills defaults", () => {
    const s = parseScenario(reference);
    expect(s.factors.map((f) => f.levels.length)).toEqual([3, 3, 2, 2, 2]);
    expect(s.phases).toHaveLength(1);
    expect(s.visitorsPerDay).toBe(20000);
    expect(s.mde).toBe(0.1);
    expect(s.runs).toBe(20);
  });

  it.each([
    [{ ...small, truth: { baseline: 0.05, main: { colour: { red: 0.1 } } } }, "truth.main.colour.red", 'unknown factor "colour"'],
    [{ ...small, truth: { baseline: 0.05, main: { hero: { w: 0.1 } } } }, "truth.main.hero.w", 'unknown level "w"'],
    [{ ...small, segments: [{ name: "s1", share: 0.5 }, { name: "s2", share: 0.4 }] }, "segments", "add up to 1"],
    [{ ...small, truth: { baseline: 1.5 } }, "truth.baseline", "the baseline rate of the truth must be less than 1"],
    [{ ...small, truth: { baseline: "high" } }, "truth.baseline", "must be a number, not text"],
    [{ ...small, segments: [{ name: "s1", share: 1.5 }] }, "segments.0.share", "the traffic share of segment 1 must be at most 1"],
    [{ ...small, truth: { baseline: 0.05, segments: { s3: { shift: 0.1 } } } }, "truth.segments.s3", 'unknown segment "s3"'],
    [{ ...small, exclude: [{ hero: "q" }] }, "exclude.0.hero", 'unknown level "q"'],
    [{ ...small, truth: { baseline: 0.05, pairs: [{ when: {}, shift: 0.1 }] } }, "truth.pairs.0.when", "at least 1"],
    [{ ...small, phases: [{ from: 10, truth: {} }, { from: 5, truth: {} }] }, "phases.1.from", "increasing"],
    [{ ...small, surprise: 1 }, "(top)", '"surprise" is not a known field here'],
  ])("rejects a bad scenario with the path and the fix (%#)", (input, path, text) => {
    const error = errorOf(input);
    expect(error).toBeInstanceOf(FacetwiseError);
    expect(error.code).toBe("INVALID_SCENARIO");
    expect(error.message).toContain(`"${path}"`);
    expect(error.message).toContain(text);
    expect(error.message).not.toMatch(/Invalid input|Too small|Too big|expected .* to be/); // zod's own wording never reaches users
  });

  it("lets a phase leave parts out and carries them over", () => {
    const s = parseScenario({
      ...small,
      truth: { baseline: 0.05, main: { hero: { y: 0.2 } }, segments: { s2: { shift: -0.3 } } },
      phases: [{ from: 100, truth: { main: { hero: { z: 0.3 } } } }],
    });
    expect(s.phases[1]!.truth.baseline).toBe(0.05);
    expect(s.phases[1]!.truth.segments).toEqual({ s2: { shift: -0.3 } });
    expect(s.phases[1]!.truth.main).toEqual({ hero: { z: 0.3 } });
  });
});
