/**
 * Regret accounting for one policy in one run. For visitor i in segment s served combination c:
 *   regret += best true rate in s − true rate of c   (both under the phase in force at i),
 *   converted = u_i < true rate of c                 (the shared uniform, visitorStream.ts).
 * Expected regret is the standard bandit measure (Lattimore & Szepesvári, "Bandit Algorithms",
 * 2020, §4.5): conversions lost in expectation against always serving each segment's best; it
 * does not depend on the random outcomes, so it is far less noisy than counting conversions.
 * The ledger also keeps a cumulative curve over `points` equal slices of the horizon and, per
 * segment and slice, how much traffic went to the segment's true best.
 */
import type { PhaseTable } from "./truthTable.ts";

export class RegretLedger {
  regret = 0;
  conversions = 0;
  readonly curve: number[] = [];
  private readonly served: Float64Array;
  private readonly servedBest: Float64Array;

  constructor(
    private readonly segmentCount: number,
    private readonly combinationCount: number,
    private readonly points: number,
  ) {
    this.served = new Float64Array(segmentCount * points);
    this.servedBest = new Float64Array(segmentCount * points);
  }

  /** Books one visitor; returns whether they converted. */
  record(phase: PhaseTable, slice: number, segment: number, combination: number, u: number): boolean {
    const rate = phase.rates[segment * this.combinationCount + combination]!;
    this.regret += phase.best[segment]! - rate;
    const converted = u < rate;
    if (converted) this.conversions++;
    const bucket = segment * this.points + slice;
    this.served[bucket]++;
    if (combination === phase.bestIndex[segment]) this.servedBest[bucket]++;
    return converted;
  }

  /** Marks the end of a slice on the cumulative curve. */
  endSlice(): void {
    this.curve.push(this.regret);
  }

  /** bestShare[s][b]: share of segment s's visitors in slice b served its true best (0 if none came). */
  bestShare(): number[][] {
    return Array.from({ length: this.segmentCount }, (_, s) =>
      Array.from({ length: this.points }, (_, b) => {
        const n = this.served[s * this.points + b]!;
        return n > 0 ? this.servedBest[s * this.points + b]! / n : 0;
      }),
    );
  }
}
