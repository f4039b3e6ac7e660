import { describe, expect, it } from "vitest";
import { RegretLedger } from "../../src/sim/regretLedger.ts";
import type { PhaseTable } from "../../src/sim/truthTable.ts";

describe("RegretLedger", () => {
  // Hand-computed: one segment, combination 0 converts at 10%, combination 1 at 20% (the best).
  // Regret per visitor = 0.2 − served rate (Lattimore & Szepesvári 2020, §4.5).
  const phase: PhaseTable = {
    from: 0,
    rates: Float64Array.from([0.1, 0.2]),
    best: Float64Array.from([0.2]),
    bestIndex: Int32Array.from([1]),
  };

  it("adds best − served rate per visitor and converts when u < rate", () => {
    const ledger = new RegretLedger(1, 2, 2);
    const served = [0, 1, 0, 0];
    const u = [0.05, 0.15, 0.5, 0.09];
    const converted = served.map((c, i) => ledger.record(phase, i < 2 ? 0 : 1, 0, c, u[i]!));
    // 0.05 < 0.1 yes; 0.15 < 0.2 yes; 0.5 < 0.1 no; 0.09 < 0.1 yes.
    expect(converted).toEqual([true, true, false, true]);
    expect(ledger.conversions).toBe(3);
    // Three visitors on the 10% page, each losing 0.1 expected conversions.
    expect(ledger.regret).toBeCloseTo(0.3, 12);
    // Slice 0 had visitors 0 and 1 (one on the best), slice 1 had visitors 2 and 3 (none).
    expect(ledger.bestShare()).toEqual([[0.5, 0]]);
  });
});
