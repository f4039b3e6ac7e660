/**
 * An allocation: the probability with which each combination is picked in one segment, and the
 * O(1) draw. The policy is the mixture
 *   π(c) = b·[c = baseline] + (1−b)·((1−e)·TS(c) + e·U(c)),
 * b = baselineShare, e = explorationFloor, TS = Thompson probabilities (share of tempered posterior
 * draws μ + α(θ − μ), α = thompsonScale, in which c is the best non-retired allowed combination;
 * allocateSegment.ts), U = uniform over the non-retired
 * allowed combinations. π(c) is stored exactly, so every logged propensity is the true
 * probability of the served combination (needed for inverse propensity scoring; Horvitz &
 * Thompson, JASA 47, 1952). A frozen allocation serves one combination with propensity 1.
 *
 * When the allowed set is listed (≤ 4096), U is folded into the listed entries and a draw is one
 * alias-table lookup. For larger sets U is drawn by rejection sampling over the factor levels
 * (never tabulated), with probability mass (1−b)·e; listed entries then hold b·[baseline] +
 * (1−b)(1−e)·TS(c) for the alias draw plus their uniform share in `propensities`.
 *
 * Each listed combination also carries its predicted rate (predictedRate.ts), so a pick stores
 * the forecast it was served with at O(1) cost (prequential calibration, calibration.ts). A
 * combination drawn from the unlisted uniform part has none (null).
 */
import { matchesNoRule, type Rule } from "./allowed.ts";
import { aliasDraw, buildAliasTable } from "./alias.ts";
import type { Rng } from "./rng.ts";

export interface UniformPart {
  /** Share of traffic spread uniformly over the eligible combinations. */
  mass: number;
  eligibleCount: number;
  factors: { name: string; levels: string[] }[];
  exclusions: Rule[];
  retired: string[];
}

export interface Allocation {
  segment: string;
  frozen: boolean;
  /** Listed combinations and their exact propensities π(c). */
  keys: string[];
  propensities: number[];
  /** Predicted rate E[σ(xᵀθ)] of each listed combination; absent in allocations stored before it was kept. */
  predicted?: number[];
  /** Alias table over the listed mass (excluding `uniform.mass`). */
  aliasProbability: number[];
  aliasIndex: number[];
  uniform: UniformPart | null;
}

export interface MixtureInput {
  segment: string;
  /** Candidate combinations (all allowed when listed; Thompson winners plus baseline otherwise). */
  keys: string[];
  /** Predicted rate of each candidate. */
  predicted: ArrayLike<number>;
  /** Thompson probability of each candidate (sums to 1 over candidates). */
  thompson: ArrayLike<number>;
  /** Whether each candidate is eligible (allowed and not retired). */
  eligible: ArrayLike<number>;
  baselineKey: string;
  baselinePredicted: number;
  baselineShare: number;
  explorationFloor: number;
  /** Present when the allowed set is too large to list: U is drawn by rejection. */
  space?: Omit<UniformPart, "mass">;
}

export function mixAllocation(input: MixtureInput): Allocation {
  const { keys, thompson, eligible, baselineShare: b, explorationFloor: e } = input;
  const n = keys.length;
  let baselineIndex = keys.indexOf(input.baselineKey);
  const listKeys = keys.slice();
  const listPredicted = Array.from(input.predicted);
  if (baselineIndex < 0) {
    listKeys.push(input.baselineKey);
    listPredicted.push(input.baselinePredicted);
    baselineIndex = n;
  }
  const explicit = new Array<number>(listKeys.length).fill(0);
  for (let i = 0; i < n; i++) explicit[i] = (1 - b) * (1 - e) * thompson[i];
  explicit[baselineIndex] += b;
  let uniform: UniformPart | null = null;
  const propensities = explicit.slice();
  if (input.space) {
    uniform = { ...input.space, mass: (1 - b) * e };
    const share = uniform.eligibleCount > 0 ? uniform.mass / uniform.eligibleCount : 0;
    const retired = new Set(uniform.retired);
    for (let i = 0; i < listKeys.length; i++) if (!retired.has(listKeys[i])) propensities[i] += share;
  } else {
    let eligibleCount = 0;
    for (let i = 0; i < n; i++) eligibleCount += eligible[i] ? 1 : 0;
    for (let i = 0; i < n; i++) {
      if (eligible[i]) {
        const u = ((1 - b) * e) / eligibleCount;
        explicit[i] += u;
        propensities[i] += u;
      }
    }
  }
  // Drop combinations the policy never serves.
  const keep: number[] = [];
  for (let i = 0; i < listKeys.length; i++) if (propensities[i] > 0) keep.push(i);
  const table = buildAliasTable(keep.map((i) => explicit[i]));
  return {
    segment: input.segment,
    frozen: false,
    keys: keep.map((i) => listKeys[i]),
    propensities: keep.map((i) => propensities[i]),
    predicted: keep.map((i) => listPredicted[i]),
    aliasProbability: table.probability,
    aliasIndex: table.alias,
    uniform,
  };
}

/** A frozen allocation: always the given combination. */
export function frozenAllocation(segment: string, key: string, predicted: number): Allocation {
  return { segment, frozen: true, keys: [key], propensities: [1], predicted: [predicted], aliasProbability: [1], aliasIndex: [0], uniform: null };
}

interface Lookup {
  index: Map<string, number>;
  retired: Set<string>;
  levelIndex: Map<string, number>[];
}
const lookups = new WeakMap<Allocation, Lookup>();

function lookup(allocation: Allocation): Lookup {
  let found = lookups.get(allocation);
  if (!found) {
    found = {
      index: new Map(allocation.keys.map((k, i) => [k, i])),
      retired: new Set(allocation.uniform?.retired ?? []),
      levelIndex: (allocation.uniform?.factors ?? []).map((f) => new Map(f.levels.map((l, i) => [l, i]))),
    };
    lookups.set(allocation, found);
  }
  return found;
}

export interface Drawn {
  combination: string;
  propensity: number;
  /** Its predicted rate; null when it was drawn from the unlisted uniform part or the allocation predates predictions. */
  predicted: number | null;
}

const drawn = (allocation: Allocation, i: number): Drawn =>
  ({ combination: allocation.keys[i], propensity: allocation.propensities[i], predicted: allocation.predicted?.[i] ?? null });

/** One pick: O(1) expected; the propensity is the exact probability of the returned combination. */
export function pickFrom(allocation: Allocation, rng: Rng): Drawn {
  const uniform = allocation.uniform;
  if (uniform !== null && uniform.mass > 0) {
    const u = rng.next();
    if (u < uniform.mass) return pickUniform(allocation, uniform, rng);
    // Reuse the same uniform for the alias draw, rescaled to [0,1).
    const i = aliasDraw({ probability: allocation.aliasProbability, alias: allocation.aliasIndex }, (u - uniform.mass) / (1 - uniform.mass));
    return drawn(allocation, i);
  }
  const p = allocation.aliasProbability;
  const x = rng.next() * p.length;
  const j = Math.floor(x);
  return drawn(allocation, x - j < p[j] ? j : allocation.aliasIndex[j]);
}

function pickUniform(allocation: Allocation, uniform: UniformPart, rng: Rng): Drawn {
  const { retired, index } = lookup(allocation);
  const space = { sizes: uniform.factors.map((f) => f.levels.length), exclusions: uniform.exclusions };
  const c = new Array<number>(space.sizes.length);
  for (;;) {
    for (let f = 0; f < c.length; f++) c[f] = rng.int(space.sizes[f]);
    if (!matchesNoRule(space, c)) continue;
    let key = "";
    for (let f = 0; f < c.length; f++) key += (f === 0 ? "" : "|") + uniform.factors[f].name + "=" + uniform.factors[f].levels[c[f]];
    if (retired.has(key)) continue;
    const i = index.get(key);
    return i === undefined ? { combination: key, propensity: uniform.mass / uniform.eligibleCount, predicted: null } : drawn(allocation, i);
  }
}

/** The predicted rate this allocation lists for `key` (null when it lists none). */
export function predictedOf(allocation: Allocation, key: string): number | null {
  const i = lookup(allocation).index.get(key);
  return i === undefined ? null : allocation.predicted?.[i] ?? null;
}

/** The probability that this allocation serves `key` (0 for combinations it never serves). */
export function propensityOf(allocation: Allocation, key: string): number {
  const { index, retired, levelIndex } = lookup(allocation);
  const i = index.get(key);
  if (i !== undefined) return allocation.propensities[i];
  const uniform = allocation.uniform;
  if (uniform === null || uniform.mass === 0 || retired.has(key)) return 0;
  const parts = key.split("|");
  if (parts.length !== uniform.factors.length) return 0;
  const c: number[] = [];
  for (let f = 0; f < parts.length; f++) {
    const prefix = uniform.factors[f].name + "=";
    if (!parts[f].startsWith(prefix)) return 0;
    const l = levelIndex[f].get(parts[f].slice(prefix.length));
    if (l === undefined) return 0;
    c.push(l);
  }
  return matchesNoRule({ sizes: uniform.factors.map((f) => f.levels.length), exclusions: uniform.exclusions }, c) ? uniform.mass / uniform.eligibleCount : 0;
}
