/**
 * Page definition → design: validates factors, levels, exclusion rules and interaction pairs and
 * builds the feature encoding
 *   φ(c) = [1, one-hot main effects (first level of each factor is the reference),
 *           pairwise interaction indicators for the enabled factor pairs],
 * i.e. reference ("treatment") coding of a two-way ANOVA-style logistic model (McCullagh &
 * Nelder, Generalized Linear Models, 2nd ed. 1989, §3.5 and ch. 4). Because every feature is a
 * 0/1 indicator, φ(c) is stored as the list of its active feature indices.
 */
import { fail } from "../errors.ts";
import { countAllowed, ENUMERATION_LIMIT, firstAllowed, type Rule, type Space } from "./allowed.ts";

export interface LevelSpec {
  name: string;
  value?: string;
}
export interface FactorSpec {
  name: string;
  levels: LevelSpec[];
}
/** factor name → level name; a combination matching every entry is never served. */
export type Exclusion = Record<string, string>;
export interface PageDefinition {
  factors: FactorSpec[];
  exclude?: Exclusion[];
  /** Enabled interaction pairs by factor name; undefined = all pairs. */
  interactions?: [string, string][];
}
/** Level index per factor, in factor order. */
export type Combination = number[];

export interface DesignFactor {
  name: string;
  levels: string[];
  /** The `value` each level carries for the landing page (null when none was given). */
  values: (string | null)[];
}

export interface Design extends Space {
  factors: DesignFactor[];
  /** Enabled interaction pairs as factor indices, i < j. */
  pairs: [number, number][];
  featureNames: string[];
  dimension: number;
  totalCount: number;
  allowedCount: number;
  excludedCount: number;
  /** All first levels, or the first allowed combination in key order if that one is excluded. */
  baseline: Combination;
  /** True when allowedCount ≤ ENUMERATION_LIMIT (the allowed set is listed, not searched). */
  enumerable: boolean;
  /** Feature index of (factor, level); −1 for the reference level. */
  mainIndex: number[][];
  /** First feature index of each pair's block; block entry (a,b) is at base + (a−1)(L_j−1) + (b−1). */
  pairBase: number[];
  /** Maximum number of active features of one combination: 1 + factors + pairs. */
  activeCount: number;
}

/** Features beyond this make every Cholesky too slow for the fold loop. */
export const MAX_DIMENSION = 400;
/** Large spaces are sampled by rejection, which needs a reasonable allowed share. */
const MIN_ALLOWED_SHARE_LARGE = 0.001;

const NAME_RULE = "a non-empty name without '|' or '=' (at most 100 characters)";

function checkName(value: unknown, field: string, what: string): string {
  if (typeof value !== "string" || value.trim() !== value || value.length === 0 || value.length > 100 || /[|=]/.test(value)) {
    throw fail("INVALID_DEFINITION", { reason: `${what} must be ${NAME_RULE}` }, field);
  }
  return value;
}

/** Validates a page definition and builds its design. Throws with the field path of the first problem. */
export function buildDesign(def: PageDefinition): Design {
  if (def === null || typeof def !== "object") {
    throw fail("INVALID_DEFINITION", { reason: "expected an object with a `factors` list" }, "factors");
  }
  const rawFactors: unknown = (def as PageDefinition).factors;
  if (!Array.isArray(rawFactors) || rawFactors.length === 0) {
    throw fail("INVALID_DEFINITION", { reason: "a page needs at least one factor" }, "factors");
  }
  const factors: DesignFactor[] = [];
  const factorIndex = new Map<string, number>();
  rawFactors.forEach((raw: unknown, f) => {
    const field = `factors[${f}]`;
    if (raw === null || typeof raw !== "object") {
      throw fail("INVALID_DEFINITION", { reason: `${field} must be an object with name and levels` }, field);
    }
    const spec = raw as FactorSpec;
    const name = checkName(spec.name, `${field}.name`, "a factor name");
    if (factorIndex.has(name)) {
      throw fail("INVALID_DEFINITION", { reason: `duplicate factor name "${name}"` }, `${field}.name`);
    }
    if (!Array.isArray(spec.levels) || spec.levels.length < 2) {
      throw fail("INVALID_DEFINITION", { reason: `factor "${name}" needs at least two levels` }, `${field}.levels`);
    }
    const levels: string[] = [];
    const values: (string | null)[] = [];
    spec.levels.forEach((level: unknown, l) => {
      const lfield = `${field}.levels[${l}]`;
      if (level === null || typeof level !== "object") {
        throw fail("INVALID_DEFINITION", { reason: `${lfield} must be an object with a name` }, lfield);
      }
      const levelName = checkName((level as LevelSpec).name, `${lfield}.name`, "a level name");
      if (levels.includes(levelName)) {
        throw fail("INVALID_DEFINITION", { reason: `duplicate level "${levelName}" in factor "${name}"` }, `${lfield}.name`);
      }
      const value = (level as LevelSpec).value;
      if (value !== undefined && value !== null && typeof value !== "string") {
        throw fail("INVALID_DEFINITION", { reason: `the value of level "${levelName}" must be a string` }, `${lfield}.value`);
      }
      levels.push(levelName);
      values.push(value ?? null);
    });
    factorIndex.set(name, f);
    factors.push({ name, levels, values });
  });
  const known = factors.map((x) => x.name).join(", ");
  const lookupFactor = (name: unknown, field: string): number => {
    const f = typeof name === "string" ? factorIndex.get(name) : undefined;
    if (f === undefined) throw fail("UNKNOWN_FACTOR", { factor: String(name), known }, field);
    return f;
  };

  // Exclusion rules.
  const rawExclude: unknown = (def as PageDefinition).exclude ?? [];
  if (!Array.isArray(rawExclude)) {
    throw fail("INVALID_DEFINITION", { reason: "`exclude` must be a list of partial combinations" }, "exclude");
  }
  const exclusions: Rule[] = rawExclude.map((raw: unknown, i) => {
    const field = `exclude[${i}]`;
    if (raw === null || typeof raw !== "object" || Array.isArray(raw) || Object.keys(raw).length === 0) {
      throw fail("INVALID_DEFINITION", { reason: `${field} must name at least one factor and its level` }, field);
    }
    const rule: Rule = Object.entries(raw as Record<string, unknown>).map(([factorName, levelName]) => {
      const f = lookupFactor(factorName, `${field}.${factorName}`);
      const l = typeof levelName === "string" ? factors[f].levels.indexOf(levelName) : -1;
      if (l < 0) {
        throw fail("UNKNOWN_LEVEL", { level: String(levelName), factor: factorName, known: factors[f].levels.join(", ") }, `${field}.${factorName}`);
      }
      return [f, l];
    });
    return rule.sort((a, b) => a[0] - b[0]);
  });

  // Interaction pairs.
  const rawPairs: unknown = (def as PageDefinition).interactions;
  let pairs: [number, number][];
  if (rawPairs === undefined || rawPairs === null) {
    pairs = [];
    for (let i = 0; i < factors.length; i++) for (let j = i + 1; j < factors.length; j++) pairs.push([i, j]);
  } else {
    if (!Array.isArray(rawPairs)) {
      throw fail("INVALID_DEFINITION", { reason: "`interactions` must be a list of [factor, factor] pairs" }, "interactions");
    }
    const seen = new Set<string>();
    pairs = rawPairs.map((raw: unknown, p) => {
      const field = `interactions[${p}]`;
      if (!Array.isArray(raw) || raw.length !== 2) {
        throw fail("INVALID_DEFINITION", { reason: `${field} must be a pair of factor names` }, field);
      }
      const a = lookupFactor(raw[0], `${field}[0]`);
      const b = lookupFactor(raw[1], `${field}[1]`);
      if (a === b) throw fail("INVALID_DEFINITION", { reason: `${field} pairs factor "${factors[a].name}" with itself` }, field);
      const pair: [number, number] = a < b ? [a, b] : [b, a];
      const key = pair.join(",");
      if (seen.has(key)) throw fail("INVALID_DEFINITION", { reason: `${field} repeats an interaction pair` }, field);
      seen.add(key);
      return pair;
    });
    pairs.sort((x, y) => x[0] - y[0] || x[1] - y[1]);
  }

  // Feature layout.
  const featureNames = ["(intercept)"];
  const mainIndex = factors.map((factor) =>
    factor.levels.map((level, l) => {
      if (l === 0) return -1;
      featureNames.push(`${factor.name}=${level}`);
      return featureNames.length - 1;
    }),
  );
  const pairBase = pairs.map(([i, j]) => {
    const base = featureNames.length;
    for (let a = 1; a < factors[i].levels.length; a++) {
      for (let b = 1; b < factors[j].levels.length; b++) {
        featureNames.push(`${factors[i].name}=${factors[i].levels[a]}|${factors[j].name}=${factors[j].levels[b]}`);
      }
    }
    return base;
  });
  const dimension = featureNames.length;
  if (dimension > MAX_DIMENSION) {
    throw fail("INVALID_DEFINITION", {
      reason: `the model would have ${dimension} features (limit ${MAX_DIMENSION}); enable fewer interaction pairs or use fewer levels`,
    }, "interactions");
  }

  const sizes = factors.map((x) => x.levels.length);
  const space: Space = { sizes, exclusions };
  const totalCount = sizes.reduce((a, b) => a * b, 1);
  const allowedCount = countAllowed(space);
  if (allowedCount === 0) {
    throw fail("INVALID_DEFINITION", { reason: "the exclusion rules exclude every combination" }, "exclude");
  }
  if (allowedCount > ENUMERATION_LIMIT && allowedCount / totalCount < MIN_ALLOWED_SHARE_LARGE) {
    throw fail("INVALID_DEFINITION", {
      reason: `the exclusion rules leave only ${allowedCount} of ${totalCount} combinations; a space this large needs at least 0.1% allowed — split the page or simplify the rules`,
    }, "exclude");
  }
  const baseline = firstAllowed(space) as Combination;

  return {
    factors,
    sizes,
    exclusions,
    pairs,
    featureNames,
    dimension,
    totalCount,
    allowedCount,
    excludedCount: totalCount - allowedCount,
    baseline,
    enumerable: allowedCount <= ENUMERATION_LIMIT,
    mainIndex,
    pairBase,
    activeCount: 1 + factors.length + pairs.length,
  };
}

/**
 * Writes the active feature indices of φ(c) to out[offset … offset+activeCount), padding with
 * `design.dimension` (the index of an always-zero slot appended to coefficient vectors), so a
 * linear predictor is a fixed-length sum without branches.
 */
export function writeActiveFeatures(design: Design, c: ArrayLike<number>, out: Int32Array, offset: number): void {
  let k = offset;
  out[k++] = 0;
  const F = design.factors.length;
  for (let f = 0; f < F; f++) out[k++] = c[f] === 0 ? design.dimension : design.mainIndex[f][c[f]];
  for (let p = 0; p < design.pairs.length; p++) {
    const [i, j] = design.pairs[p];
    const a = c[i];
    const b = c[j];
    out[k++] = a === 0 || b === 0 ? design.dimension : design.pairBase[p] + (a - 1) * (design.sizes[j] - 1) + (b - 1);
  }
}

/**
 * For each slot of `writeActiveFeatures`' output, whether its feature involves factor f (f's main
 * effect or a pair with f). The other slots depend only on the other factors' levels, and at f's
 * reference level every slot that involves f is the zero slot.
 */
export function slotsInvolving(design: Design, f: number): Uint8Array {
  return Uint8Array.from([false, ...design.factors.map((_, g) => g === f), ...design.pairs.map(([i, j]) => i === f || j === f)], Number);
}

/** φ(c) as a dense 0/1 vector of length d. */
export function featureVector(design: Design, c: ArrayLike<number>): Float64Array {
  const idx = new Int32Array(design.activeCount);
  writeActiveFeatures(design, c, idx, 0);
  const x = new Float64Array(design.dimension + 1);
  for (const i of idx) x[i] = 1;
  return x.subarray(0, design.dimension);
}
