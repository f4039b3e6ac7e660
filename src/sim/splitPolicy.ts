/**
 * The classic full-factorial split test: every allowed combination gets an equal share of each
 * segment's traffic for the whole horizon; the leader is the best observed conversion rate
 * (ties → the lower index). No stopping rule.
 */
import type { Rng } from "../model/index.ts";
import type { Policy } from "./policy.ts";

export function splitPolicy(segmentCount: number, combinationCount: number, rng: Rng): Policy {
  const n = new Float64Array(segmentCount * combinationCount);
  const k = new Float64Array(segmentCount * combinationCount);
  return {
    serve: () => rng.int(combinationCount),
    observe(segment, combination, converted) {
      n[segment * combinationCount + combination]++;
      if (converted) k[segment * combinationCount + combination]++;
    },
    fold() {},
    leaders() {
      const out = new Int32Array(segmentCount);
      for (let s = 0; s < segmentCount; s++) {
        let best = -1;
        for (let c = 0; c < combinationCount; c++) {
          const i = s * combinationCount + c;
          const rate = n[i]! > 0 ? k[i]! / n[i]! : 0;
          if (rate > best) {
            best = rate;
            out[s] = c;
          }
        }
      }
      return out;
    },
  };
}
