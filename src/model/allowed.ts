/**
 * Which combinations may be served: a combination is allowed unless it matches an exclusion rule
 * (a partial combination) on every factor the rule names. This file counts, lists, tests and
 * samples allowed combinations without ever materialising a huge space.
 *
 * Counting: depth-first enumeration with pruning when the space is small; otherwise
 * inclusion–exclusion over the rules (|⋃A_i| = Σ_{S≠∅} (−1)^{|S|+1} |⋂_{i∈S} A_i|), where a set of
 * rules intersects only if it agrees on shared factors, so inconsistent branches are cut early.
 */
import { fail } from "../errors.ts";

/** Above this many allowed combinations the best combination of a sample is found by hill climbing. */
export const ENUMERATION_LIMIT = 4096;

/** Spaces up to this size are counted by direct enumeration. */
const DIRECT_COUNT_LIMIT = 1 << 20;
/** Inclusion–exclusion gives up after visiting this many rule subsets. */
const INCLUSION_EXCLUSION_BUDGET = 2_000_000;

/** A rule as (factor index, level index) pairs, sorted by factor. */
export type Rule = [number, number][];

export interface Space {
  /** Levels per factor. */
  sizes: number[];
  exclusions: Rule[];
}

/** Combination → true unless some rule matches it entirely. */
export function matchesNoRule(space: Space, c: ArrayLike<number>): boolean {
  for (const rule of space.exclusions) {
    let all = true;
    for (const [f, l] of rule) {
      if (c[f] !== l) {
        all = false;
        break;
      }
    }
    if (all) return false;
  }
  return true;
}

/**
 * Depth-first walk over allowed combinations in key order (first factor slowest), pruning a
 * branch as soon as a rule whose factors are all assigned matches. `visit` returns false to stop.
 */
export function walkAllowed(space: Space, visit: (c: number[]) => boolean): void {
  const F = space.sizes.length;
  const rulesEndingAt: Rule[][] = Array.from({ length: F }, () => []);
  for (const rule of space.exclusions) rulesEndingAt[rule[rule.length - 1][0]].push(rule);
  const c = new Array<number>(F).fill(0);
  let stop = false;
  const step = (f: number): void => {
    for (let l = 0; l < space.sizes[f] && !stop; l++) {
      c[f] = l;
      let excluded = false;
      for (const rule of rulesEndingAt[f]) {
        let all = true;
        for (const [g, m] of rule) {
          if (c[g] !== m) {
            all = false;
            break;
          }
        }
        if (all) {
          excluded = true;
          break;
        }
      }
      if (excluded) continue;
      if (f === F - 1) {
        if (!visit(c.slice())) stop = true;
      } else step(f + 1);
    }
  };
  step(0);
}

/** Number of allowed combinations (exact). */
export function countAllowed(space: Space): number {
  const total = space.sizes.reduce((a, b) => a * b, 1);
  if (space.exclusions.length === 0) return total;
  if (total <= DIRECT_COUNT_LIMIT) {
    let n = 0;
    walkAllowed(space, () => {
      n++;
      return true;
    });
    return n;
  }
  // Inclusion–exclusion over consistent rule subsets.
  const F = space.sizes.length;
  const fixed = new Array<number>(F).fill(-1);
  let excluded = 0;
  let visited = 0;
  const rules = space.exclusions;
  const extend = (start: number, depth: number, freeProduct: number): void => {
    for (let i = start; i < rules.length; i++) {
      if (++visited > INCLUSION_EXCLUSION_BUDGET) {
        throw fail("INVALID_DEFINITION", {
          reason: "too many overlapping exclusion rules to count the allowed combinations; merge or simplify the rules",
        }, "exclude");
      }
      const changed: number[] = [];
      let consistent = true;
      let product = freeProduct;
      for (const [f, l] of rules[i]) {
        if (fixed[f] === -1) {
          fixed[f] = l;
          changed.push(f);
          product /= space.sizes[f];
        } else if (fixed[f] !== l) {
          consistent = false;
          break;
        }
      }
      if (consistent) {
        excluded += depth % 2 === 0 ? product : -product;
        extend(i + 1, depth + 1, product);
      }
      for (const f of changed) fixed[f] = -1;
    }
  };
  extend(0, 0, total);
  return Math.round(total - excluded);
}

/** The first allowed combination in key order, or null when every combination is excluded. */
export function firstAllowed(space: Space): number[] | null {
  let found: number[] | null = null;
  walkAllowed(space, (c) => {
    found = c;
    return false;
  });
  return found;
}

/**
 * A uniformly random allowed combination by rejection (used only for large spaces, whose allowed
 * share is checked when the design is built). Writes into `out`.
 */
export function sampleAllowed(space: Space, next: () => number, out: number[]): boolean {
  const F = space.sizes.length;
  for (let attempt = 0; attempt < 100_000; attempt++) {
    for (let f = 0; f < F; f++) out[f] = Math.floor(next() * space.sizes[f]);
    if (matchesNoRule(space, out)) return true;
  }
  return false;
}

/** True when c is a well-formed combination of this space that no exclusion rule matches. */
export function isAllowed(space: Space, c: ArrayLike<number>): boolean {
  if (c.length !== space.sizes.length) return false;
  for (let f = 0; f < c.length; f++) {
    if (!Number.isInteger(c[f]) || c[f] < 0 || c[f] >= space.sizes[f]) return false;
  }
  return matchesNoRule(space, c);
}

/** Lists the allowed combinations in key order; only for spaces with at most ENUMERATION_LIMIT of them. */
export function allowedCombinations(space: Space): number[][] {
  const list: number[][] = [];
  walkAllowed(space, (c) => {
    list.push(c);
    return list.length <= ENUMERATION_LIMIT;
  });
  if (list.length > ENUMERATION_LIMIT) {
    throw fail("INVALID_DEFINITION", {
      reason: `more than ${ENUMERATION_LIMIT} allowed combinations; they are searched, not listed`,
    }, "factors");
  }
  return list;
}
