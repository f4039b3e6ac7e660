/**
 * The simulated visitor stream shared by every policy in a run (common random numbers): visitor i
 * arrives in segment `segment[i]` (drawn by the scenario's shares) with one uniform draw `u[i]`,
 * and converts on combination c exactly when u[i] < true rate of c. So two policies that serve
 * visitor i the same combination see the same outcome, and differences between policies are not
 * noise from different visitors.
 */
import { createRng } from "../model/index.ts";

export interface VisitorStream {
  segment: Uint16Array;
  u: Float64Array;
}

export function visitorStream(shares: number[], visitors: number, seed: number): VisitorStream {
  const rng = createRng(seed);
  const cumulative: number[] = [];
  let total = 0;
  for (const share of shares) cumulative.push((total += share));
  const segment = new Uint16Array(visitors);
  const u = new Float64Array(visitors);
  const last = shares.length - 1;
  for (let i = 0; i < visitors; i++) {
    const r = rng.next() * cumulative[last]!;
    let s = 0;
    while (s < last && r >= cumulative[s]!) s++;
    segment[i] = s;
    u[i] = rng.next();
  }
  return { segment, u };
}
