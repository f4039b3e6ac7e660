/**
 * The independent baseline: Beta(1,1)–Bernoulli Thompson sampling per segment and combination,
 * nothing shared between combinations or segments (W. R. Thompson, Biometrika 25, 1933; Chapelle
 * & Li, NIPS 2011). Each visitor gets the arg-max of one posterior draw per allowed combination;
 * posteriors update as picks mature (the same attribution rule as the engine). Leader = highest
 * posterior mean (1 + k) / (2 + n). No stopping rule.
 */
import type { Rng } from "../model/index.ts";
import { betaSample } from "./betaSample.ts";
import { conversionTally } from "./conversionTally.ts";
import type { Policy } from "./policy.ts";

export function independentPolicy(segmentCount: number, combinationCount: number, rng: Rng): Policy {
  const tally = conversionTally(segmentCount, combinationCount);
  const { n, k } = tally;
  return {
    serve(segment) {
      const base = segment * combinationCount;
      let best = 0;
      let bestDraw = -1;
      for (let c = 0; c < combinationCount; c++) {
        const draw = betaSample(1 + k[base + c]!, 1 + n[base + c]! - k[base + c]!, rng);
        if (draw > bestDraw) {
          bestDraw = draw;
          best = c;
        }
      }
      return best;
    },
    observe: tally.observe,
    fold() {},
    leaders: () => tally.leaders((k, n) => (1 + k) / (2 + n)),
  };
}
