/**
 * Each posterior sample's best allowed combination — the core of Thompson sampling, where the
 * share of samples in which a combination is best is its probability of being best and, for
 * plain Thompson sampling, its allocation (Thompson 1933, Biometrika 25; Russo et al., "A Tutorial
 * on Thompson Sampling", Foundations and Trends in ML 11(1), 2018, §3). The allocation here counts
 * tempered draws (see Tempering and allocateSegment.ts).
 *
 * Up to ENUMERATION_LIMIT (4096) allowed combinations every combination is scored for every
 * sample (exact). Above it, coordinate-ascent hill climbing: change one factor at a time to its
 * best allowed level until no single change improves, from the posterior-mean optimum and from
 * random allowed starts, keeping the best end point. A climb can stop at a local optimum of the
 * interaction terms; test/model/bestCombination.test.ts measures how often it finds the
 * enumerated optimum.
 */
import { allowedCombinations, matchesNoRule, sampleAllowed, type Space } from "./allowed.ts";
import { combinationKey } from "./combinationKey.ts";
import { type Combination, type Design, slotsInvolving, writeActiveFeatures } from "./design.ts";
import { addRows } from "./addRows.ts";
import type { Rng } from "./rng.ts";

/** Random starts per sample in addition to the posterior-mean optimum. */
export const CLIMB_RESTARTS = 8;

/**
 * The allowed combinations of an enumerable design with their active features (cached per design),
 * in compressed-row form: combination c's features are idx[start[c]] … idx[start[c+1] − 1]. Only
 * real features are kept — a feature at a factor's reference level is the zero slot and adds
 * nothing — so a score costs about half the additions of the fixed-length feature list.
 *
 * Each combination's features are split into its prefix (those not involving the last factor:
 * the intercept, the other factors' main effects and their pairs), listed first, and the rest
 * (start[c] + prefixLength[c] onwards). Combinations come in lexicographic order with the last
 * factor fastest, so consecutive ones mostly share their prefix (samePrefix[c] = 1 when c's prefix
 * equals c − 1's) and a scan adds the prefix once per run of the last factor's levels.
 */
export interface ComboTable {
  combos: Combination[];
  keys: string[];
  start: Int32Array;
  idx: Int32Array;
  prefixLength: Int32Array;
  samePrefix: Uint8Array;
  indexOfKey: Map<string, number>;
}

const tables = new WeakMap<Design, ComboTable>();

export function comboTable(design: Design): ComboTable {
  let table = tables.get(design);
  if (!table) {
    const combos = allowedCombinations(design);
    const last = design.factors.length - 1;
    const touchesLast = slotsInvolving(design, last);
    const active = new Int32Array(design.activeCount);
    const start = new Int32Array(combos.length + 1);
    const prefixLength = new Int32Array(combos.length);
    const samePrefix = new Uint8Array(combos.length);
    const features: number[] = [];
    combos.forEach((c, i) => {
      writeActiveFeatures(design, c, active, 0);
      const real = (k: number) => active[k] !== design.dimension;
      for (let k = 0; k < active.length; k++) if (real(k) && !touchesLast[k]) features.push(active[k]);
      prefixLength[i] = features.length - start[i];
      for (let k = 0; k < active.length; k++) if (real(k) && touchesLast[k]) features.push(active[k]);
      start[i + 1] = features.length;
      samePrefix[i] = i > 0 && c.every((level, f) => f === last || level === combos[i - 1][f]) ? 1 : 0;
    });
    const keys = combos.map((c) => combinationKey(design, c));
    table = { combos, keys, start, idx: Int32Array.from(features), prefixLength, samePrefix, indexOfKey: new Map(keys.map((k, i) => [k, i])) };
    tables.set(design, table);
  }
  return table;
}

/** Linear predictor xᵀθ of combination c's active features for every draw (feature-major draws, sampling.ts). */
export function scoresOf(idx: Int32Array, offset: number, m: number, samples: Float64Array, count: number, out: Float64Array): void {
  out.fill(0, 0, count);
  addRows(idx, offset, m, samples, count, count, out);
}

export interface EnumeratedScan {
  /** Samples in which each combination is best among all allowed: its probability of being best. */
  countAll: Float64Array;
  /** Tempered samples in which each combination is best among the eligible (non-retired) ones: the Thompson allocation. */
  countEligible: Float64Array;
  /** Each sample's best linear predictor among all allowed. */
  bestScore: Float64Array;
}

/**
 * How the allocation's draws are tempered: a draw θ = μ + (θ − μ) becomes μ + scale·(θ − μ), a draw
 * from N(μ, scale²Σ). A combination's tempered score is then meanScore + scale·(score − meanScore),
 * so one pass over the combinations serves both the honest and the tempered argmax.
 */
export interface Tempering {
  scale: number;
  /** Each combination's linear predictor at the posterior mean, xᵀμ. */
  meanScore: Float64Array;
}

/**
 * Scores every allowed combination for every draw, combination by combination: each score is the
 * shared prefix's sum (ComboTable) plus a few contiguous feature rows (feature-major draws), then
 * one pass keeps each draw's best so far.
 */
export function scanEnumerated(table: ComboTable, samples: Float64Array, count: number, eligible: Uint8Array, tempering?: Tempering): EnumeratedScan {
  const n = table.combos.length;
  const { start, idx } = table;
  const scale = tempering?.scale ?? 1;
  const meanScore = tempering?.meanScore ?? new Float64Array(n);
  const bestScore = new Float64Array(count).fill(-Infinity);
  const bestAt = new Int32Array(count);
  const bestEligible = new Float64Array(count).fill(-Infinity);
  const bestEligibleAt = new Int32Array(count).fill(-1);
  const score = new Float64Array(count);
  const prefix = new Float64Array(count);
  const { prefixLength, samePrefix } = table;
  for (let c = 0; c < n; c++) {
    if (samePrefix[c] !== 1) scoresOf(idx, start[c], prefixLength[c], samples, count, prefix);
    score.set(prefix);
    addRows(idx, start[c] + prefixLength[c], start[c + 1] - start[c] - prefixLength[c], samples, count, count, score);
    // One pass per combination (the scan is bound by passes over the draws): the honest argmax,
    // and for an eligible combination the tempered one too.
    if (eligible[c] !== 1) {
      for (let s = 0; s < count; s++) {
        if (score[s] > bestScore[s]) {
          bestScore[s] = score[s];
          bestAt[s] = c;
        }
      }
      continue;
    }
    const m = meanScore[c];
    for (let s = 0; s < count; s++) {
      const v = score[s];
      if (v > bestScore[s]) {
        bestScore[s] = v;
        bestAt[s] = c;
      }
      const t = scale === 1 ? v : m + scale * (v - m);
      if (t > bestEligible[s]) {
        bestEligible[s] = t;
        bestEligibleAt[s] = c;
      }
    }
  }
  const countAll = new Float64Array(n);
  const countEligible = new Float64Array(n);
  for (let s = 0; s < count; s++) {
    countAll[bestAt[s]]++;
    if (bestEligibleAt[s] >= 0) countEligible[bestEligibleAt[s]]++;
  }
  return { countAll, countEligible, bestScore };
}

interface FactorLinks {
  /** Pairs involving the factor: pair index, the other factor, and whether this factor is the pair's first. */
  pairs: { p: number; other: number; first: boolean }[];
  /** The exclusion rules that name this factor (the only ones a change of it can trigger). */
  space: Space;
}

function links(design: Design): FactorLinks[] {
  return design.factors.map((_, f) => ({
    pairs: design.pairs.flatMap(([i, j], p): { p: number; other: number; first: boolean }[] =>
      i === f ? [{ p, other: j, first: true }] : j === f ? [{ p, other: i, first: false }] : [],
    ),
    space: { sizes: design.sizes, exclusions: design.exclusions.filter((rule) => rule.some(([g]) => g === f)) },
  }));
}

/**
 * One θ inside an array: feature j is at base + j·step (a row of the posterior mean: step 1; draw s
 * of feature-major draws: base s, step M).
 */
interface ThetaView {
  values: Float64Array;
  base: number;
  step: number;
}

/** θ's contribution of factor f at level l given the other factors' levels in c (main + its pairs). */
function contribution(design: Design, link: FactorLinks, theta: ThetaView, f: number, l: number, c: Combination): number {
  const { values, base, step } = theta;
  if (l === 0) return 0; // every feature involving a reference level is zero
  let acc = values[base + step * design.mainIndex[f][l]];
  for (const { p, other, first } of link.pairs) {
    const o = c[other];
    if (o === 0) continue;
    const j = design.pairs[p][1];
    const a = first ? l : o;
    const b = first ? o : l;
    acc += values[base + step * (design.pairBase[p] + (a - 1) * (design.sizes[j] - 1) + (b - 1))];
  }
  return acc;
}

function fullScore(design: Design, theta: ThetaView, c: Combination, scratch: Int32Array): number {
  const { values, base, step } = theta;
  writeActiveFeatures(design, c, scratch, 0);
  let acc = 0;
  for (let a = 0; a < scratch.length; a++) acc += values[base + step * scratch[a]];
  return acc;
}

/** Coordinate ascent from c (modified in place) under θ; returns the end score. */
function climb(design: Design, fl: FactorLinks[], theta: ThetaView, c: Combination, scratch: Int32Array): number {
  const F = design.factors.length;
  let improved = true;
  let sweeps = 0;
  while (improved && sweeps++ < 100) {
    improved = false;
    for (let f = 0; f < F; f++) {
      const current = c[f];
      let bestLevel = current;
      let best = contribution(design, fl[f], theta, f, current, c);
      for (let l = 0; l < design.sizes[f]; l++) {
        if (l === current) continue;
        const v = contribution(design, fl[f], theta, f, l, c);
        if (v <= best) continue;
        c[f] = l;
        const allowed = matchesNoRule(fl[f].space, c);
        c[f] = current;
        if (allowed) {
          best = v;
          bestLevel = l;
        }
      }
      if (bestLevel !== current) {
        c[f] = bestLevel;
        improved = true;
      }
    }
  }
  return fullScore(design, theta, c, scratch);
}

export interface ClimbScan {
  /** Distinct winners, with how many samples each won. */
  winners: { combination: Combination; key: string; count: number }[];
  bestScore: Float64Array;
}

/**
 * Hill-climbing search of each sample's best allowed combination for spaces too large to list.
 * `meanTheta` (length d+1, last slot 0) seeds one start per sample with the posterior-mean optimum.
 */
export function scanByClimbing(design: Design, samples: Float64Array, count: number, meanTheta: Float64Array, rng: Rng, restarts = CLIMB_RESTARTS): ClimbScan {
  const fl = links(design);
  const F = design.factors.length;
  const scratch = new Int32Array(design.activeCount);
  const next = () => rng.next();
  // Posterior-mean optimum, itself found with several restarts.
  let meanBest = design.baseline.slice();
  const mean: ThetaView = { values: meanTheta, base: 0, step: 1 };
  let meanBestScore = climb(design, fl, mean, meanBest, scratch);
  const start = new Array<number>(F);
  for (let r = 0; r < 4 * restarts; r++) {
    if (!sampleAllowed(design, next, start)) break;
    const score = climb(design, fl, mean, start, scratch);
    if (score > meanBestScore) {
      meanBestScore = score;
      meanBest = start.slice();
    }
  }
  const winners = new Map<string, { combination: Combination; key: string; count: number }>();
  const bestScore = new Float64Array(count);
  const c = new Array<number>(F);
  for (let s = 0; s < count; s++) {
    const theta: ThetaView = { values: samples, base: s, step: count };
    let best = meanBest.slice();
    let bestValue = climb(design, fl, theta, best, scratch);
    for (let r = 0; r < restarts; r++) {
      if (!sampleAllowed(design, next, c)) break;
      const v = climb(design, fl, theta, c, scratch);
      if (v > bestValue) {
        bestValue = v;
        best = c.slice();
      }
    }
    bestScore[s] = bestValue;
    const code = best.join(",");
    const entry = winners.get(code);
    if (entry) entry.count++;
    else winners.set(code, { combination: best, key: combinationKey(design, best), count: 1 });
  }
  return { winners: [...winners.values()], bestScore };
}
