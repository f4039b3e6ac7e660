/**
 * What every simulated policy does. Combinations are numbered by their position in the design's
 * allowed list and segments by their position in the scenario. The run loop (runSimulation.ts)
 * calls `serve` for each visitor, `observe` when that visitor's pick matures (maturity.ts),
 * `fold` on the page's fold interval, and `leaders` once at the end.
 */
import type { RateInterval } from "../model/index.ts";

export interface SettleRecord {
  /** Visitor index at which the segment first settled. */
  visitor: number;
  /** The leader it settled on. */
  leader: number;
}

export interface Policy {
  serve(segment: number): number;
  observe(segment: number, combination: number, converted: boolean): void;
  /** Fold matured data into the policy's state at visitor index `now`. */
  fold(now: number): void;
  /** The final leader per segment. */
  leaders(): Int32Array;
  /** First settle per segment (null = not yet), for policies with a stopping rule; else undefined. */
  settled?(): (SettleRecord | null)[];
  /** The 95% rate interval it would report now, per segment and combination (the engine only). */
  intervals?(): RateInterval[][];
}
