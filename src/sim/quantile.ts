/**
 * The p10/p90 of figures over runs: Hyndman & Fan definition 7 (the model's quantileInPlace) on a
 * copy, so the caller's array keeps its order.
 */
import { quantileInPlace } from "../model/index.ts";

export function quantile(values: number[], p: number): number {
  return quantileInPlace(Float64Array.from(values), p);
}
