/**
 * The fold: new trials and new conversions, aggregated into (segment, combination, n, k) rows,
 * update each segment's site. A pick counts as a trial (n) in the first fold after it is served
 * and its conversion (k) in the first fold after it is reported, so k may exceed n within one row.
 * The log-likelihood k·log σ(η) + (n−k)·log(1−σ(η)) = k·η + n·log(1−σ(η)) is linear in (n, k):
 * summed over folds it equals the full-data likelihood, and its Hessian n·p(1−p)·xxᵀ does not
 * involve k, so every fold stays a convex problem for any n ≥ 0, k ≥ 0 (Bishop, Pattern
 * Recognition and Machine Learning, 2006, §4.3.2–4.5: logistic log-likelihood and its Hessian,
 * Laplace approximation). For a segment with current posterior N(μ_cur, P_cur⁻¹) (hierarchy.ts) the
 * Laplace fit under that prior gives (μ_new, P_new) with P_new = P_cur + D, D = Σ n p(1−p) x xᵀ
 * at the mode (newton.ts); the site then absorbs exactly what the fold added:
 *   Λ_s += P_new − P_cur = D,   η_s += P_new μ_new − P_cur μ_cur = P_cur(μ_new − μ_cur) + D μ_new,
 * the assumed-density-filtering update of a Gaussian site (Opper, "A Bayesian approach to on-line
 * learning", in On-line Learning in Neural Networks, 1998; Minka 2001, ch. 3).
 * Rows are merged by combination first, which is lossless for categorical features.
 *
 * Segments beyond `maxSegments` (new ones, fewest visitors first) and rows of segment "*" share
 * one overflow site: their data inform the pooled model, and they are served from it.
 */
import { fail, FacetwiseError } from "../errors.ts";
import { parseCombinationKey } from "./combinationKey.ts";
import { type Design, writeActiveFeatures } from "./design.ts";
import type { Gaussian } from "./hierarchy.ts";
import { laplaceFit, type RowBlock } from "./newton.ts";
import { copySite, emptySite, OVERFLOW_SITE, type Site } from "./state.ts";

export interface FoldRow {
  segment: string;
  /** Canonical combination key. */
  combination: string;
  /** New trials: picks served since the last fold. */
  n: number;
  /** New conversions reported since the last fold (of picks folded now or earlier; may exceed n). */
  k: number;
}

export interface SegmentRows {
  block: RowBlock;
  visitors: number;
  conversions: number;
}

export interface GroupedRows {
  bySegment: Map<string, SegmentRows>;
  /** Rows whose combination key does not belong to the design (e.g. a removed level). */
  skipped: { rows: number; visitors: number };
}

/** Validates rows, routes segments (overflow beyond maxSegments) and merges rows per combination. */
export function groupRows(design: Design, rows: FoldRow[], sites: Map<string, Site>, maxSegments: number): GroupedRows {
  const perSegment = new Map<string, Map<string, [number, number]>>();
  const skipped = { rows: 0, visitors: 0 };
  // Rows usually arrive grouped by segment: remember the last segment's map.
  let lastSegment: string | undefined;
  let combos: Map<string, [number, number]> | undefined;
  for (const row of rows) {
    const segment = row?.segment;
    if (typeof segment !== "string") throw fail("INVALID_FOLD_ROW", { segment: String(segment), reason: "segment must be a string" }, "segment");
    const { n, k } = row;
    if (typeof n !== "number" || typeof k !== "number" || !(n >= 0 && k >= 0 && n < Infinity && k < Infinity)) {
      throw fail("INVALID_FOLD_ROW", { segment, reason: `need finite counts n ≥ 0 and k ≥ 0, got n=${n}, k=${k}` }, "n");
    }
    if (n === 0 && k === 0) continue;
    if (segment !== lastSegment || combos === undefined) {
      combos = perSegment.get(segment);
      if (!combos) perSegment.set(segment, (combos = new Map()));
      lastSegment = segment;
    }
    const entry = combos.get(row.combination);
    if (entry) {
      entry[0] += n;
      entry[1] += k;
    } else combos.set(row.combination, [n, k]);
  }
  const visitorsBySegment = new Map<string, number>();
  for (const [segment, entries] of perSegment) {
    let total = 0;
    for (const [n] of entries.values()) total += n;
    visitorsBySegment.set(segment, total);
  }

  // Route segments: known sites keep theirs; new ones are admitted by volume until maxSegments.
  let tracked = 0;
  for (const key of sites.keys()) if (key !== OVERFLOW_SITE) tracked++;
  const route = new Map<string, string>();
  const newcomers = [...perSegment.keys()]
    .filter((s) => s !== OVERFLOW_SITE && !sites.has(s))
    .sort((a, b) => visitorsBySegment.get(b)! - visitorsBySegment.get(a)! || (a < b ? -1 : 1));
  for (const s of perSegment.keys()) if (s === OVERFLOW_SITE || sites.has(s)) route.set(s, s);
  for (const s of newcomers) route.set(s, tracked < maxSegments ? (tracked++, s) : OVERFLOW_SITE);

  const m = design.activeCount;
  const features = new Map<string, Int32Array | null>();
  const featuresOf = (key: string): Int32Array | null => {
    let x = features.get(key);
    if (x === undefined) {
      try {
        const c = parseCombinationKey(design, key);
        x = new Int32Array(m);
        writeActiveFeatures(design, c, x, 0);
      } catch (error) {
        if (!(error instanceof FacetwiseError)) throw error;
        x = null;
      }
      features.set(key, x);
    }
    return x;
  };

  const merged = new Map<string, Map<string, [number, number]>>();
  for (const [segment, combos] of perSegment) {
    const target = route.get(segment)!;
    let into = merged.get(target);
    if (!into) merged.set(target, (into = new Map()));
    for (const [key, [n, k]] of combos) {
      if (featuresOf(key) === null) {
        skipped.rows++;
        skipped.visitors += n;
        continue;
      }
      const entry = into.get(key);
      if (entry) {
        entry[0] += n;
        entry[1] += k;
      } else into.set(key, [n, k]);
    }
  }

  const bySegment = new Map<string, SegmentRows>();
  for (const [segment, combos] of merged) {
    if (combos.size === 0) continue;
    const count = combos.size;
    const block: RowBlock = { count, m, idx: new Int32Array(count * m), x: new Float64Array(count * m).fill(1), n: new Float64Array(count), k: new Float64Array(count) };
    let r = 0;
    let visitors = 0;
    let conversions = 0;
    for (const [key, [n, k]] of combos) {
      block.idx.set(featuresOf(key)!, r * m);
      block.n[r] = n;
      block.k[r] = k;
      visitors += n;
      conversions += k;
      r++;
    }
    bySegment.set(segment, { block, visitors, conversions });
  }
  return { bySegment, skipped };
}

/** Folds one segment's rows into its site, with the segment's current posterior as the Newton prior. */
export function foldSegment(design: Design, current: Gaussian, site: Site | undefined, rows: SegmentRows, segment: string): Site {
  const d = design.dimension;
  const fit = laplaceFit({ precision: current.precision, mean: current.mean }, d, rows.block, `the fold of segment "${segment}"`);
  const next = site ? copySite(site) : emptySite(d);
  for (let i = 0; i < d * d; i++) next.lambda[i] += fit.dataPrecision[i];
  const pCur = current.precision;
  for (let i = 0; i < d; i++) {
    let acc = 0;
    for (let j = 0; j < d; j++) acc += pCur[i * d + j] * (fit.mode[j] - current.mean[j]) + fit.dataPrecision[i * d + j] * fit.mode[j];
    next.eta[i] += acc;
  }
  next.visitors += rows.visitors;
  next.conversions += rows.conversions;
  next.folds += 1;
  return next;
}
