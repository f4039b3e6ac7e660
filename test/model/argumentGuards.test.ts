import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { requireCount, requireOpenProbability, requireTrials } from "../../src/model/argumentGuards.ts";

function caught(f: () => void): FacetwiseError {
  try {
    f();
  } catch (e) {
    return e as FacetwiseError;
  }
  throw new Error("expected a FacetwiseError");
}

describe("argument guards", () => {
  it("accept valid counts, trials and probabilities", () => {
    expect(() => requireCount("x", 0)).not.toThrow();
    expect(() => requireTrials("x", 3, "n", 3)).not.toThrow();
    expect(() => requireOpenProbability("p", 0.5)).not.toThrow();
  });

  it("name the argument, say what is wrong, and carry INVALID_ARGUMENT with status 400", () => {
    const e = caught(() => requireCount("visitors", -2));
    expect(e).toBeInstanceOf(FacetwiseError);
    expect(e.code).toBe("INVALID_ARGUMENT");
    expect(e.status).toBe(400);
    expect(e.field).toBe("visitors");
    expect(e.message).toBe('Invalid argument "visitors": must be a whole number ≥ 0, got -2');
    expect(caught(() => requireCount("x", Number.NaN)).field).toBe("x");
    expect(caught(() => requireTrials("x", 0, "n", 0)).message).toMatch(/"n": must be at least 1/);
    expect(caught(() => requireTrials("x", 5, "n", 4)).field).toBe("x");
    expect(caught(() => requireOpenProbability("alpha", 0)).field).toBe("alpha");
    expect(caught(() => requireOpenProbability("alpha", Number.NaN)).field).toBe("alpha");
  });
});
