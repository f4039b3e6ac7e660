import { describe, expect, it } from "vitest";
import type { RunResult } from "../../src/sim/runSimulation.ts";
import { settledShare } from "../../src/sim/summarize.ts";

describe("settled share", () => {
  it("counts run × segment pairs that settled, and is undefined without a stopping rule", () => {
    // By hand: run 1 settled one of two segments, run 2 none → 1 of 4 pairs.
    const run = (settleCorrect: (number | null)[] | null) => ({ settleCorrect }) as RunResult["facetwise"];
    const results = [
      { facetwise: run([1, null]), split: run(null), independent: run(null) },
      { facetwise: run([null, null]), split: run(null), independent: run(null) },
    ] as RunResult[];
    expect(settledShare(results, "facetwise")).toBe(0.25);
    expect(settledShare(results, "split")).toBeUndefined();
  });
});
