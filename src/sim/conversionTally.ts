/**
 * Visits n and conversions k per (segment, combination), as the two baseline policies keep them,
 * and each segment's leader under a policy's own score of (k, n).
 */
export interface ConversionTally {
  readonly n: Float64Array;
  readonly k: Float64Array;
  observe(segment: number, combination: number, converted: boolean): void;
  /** Per segment, the combination with the highest score(k, n); ties go to the lower index. */
  leaders(score: (k: number, n: number) => number): Int32Array;
}

export function conversionTally(segmentCount: number, combinationCount: number): ConversionTally {
  const n = new Float64Array(segmentCount * combinationCount);
  const k = new Float64Array(segmentCount * combinationCount);
  return {
    n,
    k,
    observe(segment, combination, converted) {
      n[segment * combinationCount + combination]++;
      if (converted) k[segment * combinationCount + combination]++;
    },
    leaders(score) {
      const out = new Int32Array(segmentCount);
      for (let s = 0; s < segmentCount; s++) {
        let best = -Infinity;
        for (let c = 0; c < combinationCount; c++) {
          const i = s * combinationCount + c;
          const value = score(k[i]!, n[i]!);
          if (value > best) {
            best = value;
            out[s] = c;
          }
        }
      }
      return out;
    },
  };
}
