/**
 * A segment's sufficient statistics: per combination, the (effective) visitors n and conversions
 * k folded so far. Factors are categorical, so the binomial log-likelihood
 *   Σ_c k_c log σ(x_cᵀθ) + (n_c − k_c) log(1 − σ(x_cᵀθ))
 * of every visitor ever folded depends on the data only through these counts (Bishop, Pattern
 * Recognition and Machine Learning, 2006, §4.3.2: the logistic likelihood of grouped binomial
 * data). Forgetting multiplies all counts by w = 2^(−Δt/half-life), which turns the likelihood
 * into its power w — an exact power likelihood, not an approximation (Ibrahim & Chen, "Power prior
 * distributions for regression models", Statistical Science 15(1), 2000).
 *
 * Counts are immutable values: adding rows or decaying returns new counts. Each combination's
 * active features (design.ts) are kept beside its counts, so the Newton fit reads them as a
 * RowBlock without parsing keys again.
 */
import { FacetwiseError } from "../errors.ts";
import { parseCombinationKey } from "./combinationKey.ts";
import { type Design, writeActiveFeatures } from "./design.ts";
import type { RowBlock } from "./newton.ts";

export interface SegmentCounts {
  /** Canonical combination keys, in row order. */
  keys: string[];
  n: Float64Array;
  k: Float64Array;
  /** Active feature indices of row r at idx[r·m … r·m + m), m = design.activeCount. */
  idx: Int32Array;
  /** Σ n and Σ k. */
  visitors: number;
  conversions: number;
}

/** Below this an effective count carries no information worth keeping (after long forgetting). */
const NEGLIGIBLE = 1e-9;

const featureCache = new WeakMap<Design, Map<string, Int32Array | null>>();

/** The active features of a combination key, or null when the key does not belong to the design. */
export function featuresOf(design: Design, key: string): Int32Array | null {
  let cache = featureCache.get(design);
  if (!cache) featureCache.set(design, (cache = new Map()));
  let x = cache.get(key);
  if (x === undefined) {
    try {
      x = new Int32Array(design.activeCount);
      writeActiveFeatures(design, parseCombinationKey(design, key), x, 0);
    } catch (error) {
      if (!(error instanceof FacetwiseError)) throw error;
      x = null;
    }
    cache.set(key, x);
  }
  return x;
}

/**
 * `counts` scaled by w and with `added` (key → [n, k]) added. Keys must belong to the design
 * (callers filter with featuresOf). Rows whose scaled counts fall below 1e-9 are dropped.
 */
export function addCounts(design: Design, counts: SegmentCounts | undefined, w: number, added: Map<string, [number, number]>): SegmentCounts {
  const m = design.activeCount;
  const keys: string[] = [];
  const n: number[] = [];
  const k: number[] = [];
  const row = new Map<string, number>();
  if (counts) {
    for (let r = 0; r < counts.keys.length; r++) {
      const nr = counts.n[r] * w;
      const kr = counts.k[r] * w;
      if (nr < NEGLIGIBLE && kr < NEGLIGIBLE && !added.has(counts.keys[r])) continue;
      row.set(counts.keys[r], keys.length);
      keys.push(counts.keys[r]);
      n.push(nr);
      k.push(kr);
    }
  }
  for (const [key, [dn, dk]] of added) {
    const r = row.get(key);
    if (r === undefined) {
      row.set(key, keys.length);
      keys.push(key);
      n.push(dn);
      k.push(dk);
    } else {
      n[r] += dn;
      k[r] += dk;
    }
  }
  const idx = new Int32Array(keys.length * m);
  keys.forEach((key, r) => idx.set(featuresOf(design, key)!, r * m));
  let visitors = 0;
  let conversions = 0;
  for (let r = 0; r < keys.length; r++) {
    visitors += n[r];
    conversions += k[r];
  }
  return { keys, n: Float64Array.from(n), k: Float64Array.from(k), idx, visitors, conversions };
}

/** The counts as the Newton fit's rows (indicator features: every x is 1). */
export function rowBlock(design: Design, counts: SegmentCounts): RowBlock {
  const m = design.activeCount;
  return { count: counts.keys.length, m, idx: counts.idx, x: new Float64Array(counts.keys.length * m).fill(1), n: counts.n, k: counts.k };
}
