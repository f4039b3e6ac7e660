/**
 * The model state of one page: per segment a Gaussian *site* in natural parameters (Λ_s, η_s)
 * holding the accumulated data information of that segment's folds in θ-space (see
 * hierarchy.ts for how sites become posteriors), plus the consecutive-fold counters the
 * retirement rule needs. Only data lives here: the prior is recomputed from the settings, so a
 * changed prior setting takes effect without refitting and forgetting never erodes the prior.
 *
 * The state is treated as immutable: functions return new states. It serialises to plain JSON
 * (Λ_s stored as its packed upper triangle).
 */
import { fail } from "../errors.ts";
import type { Design } from "./design.ts";
import type { PageSettings } from "./settings.ts";

/** Segment key of the shared site of segments beyond maxSegments (served by the pooled model). */
export const OVERFLOW_SITE = "*";

export interface Site {
  /** Λ_s, d×d row-major. */
  lambda: Float64Array;
  /** η_s, length d. */
  eta: Float64Array;
  /** Visitors and conversions folded in (after forgetting, as effective counts). */
  visitors: number;
  conversions: number;
  folds: number;
}

export interface ModelState {
  version: 1;
  featureNames: string[];
  /** `now` of the last fold cycle (ms), for forgetting; null before the first. */
  lastFoldAt: number | null;
  sites: Map<string, Site>;
  /** segment → combination key → consecutive folds the combination met the retirement rule. */
  dominated: Map<string, Map<string, number>>;
  /**
   * τ the last fold cycle learned (spreadSearch.ts): the posteriors served until the next fold use
   * it, and the next search starts from it. null before the first cycle.
   */
  segmentSpread: number | null;
  /** Segments settled after the last cycle, for the settle rule's hysteresis (settleRule.ts); absent = none. */
  settled?: string[];
}

export function emptySite(d: number): Site {
  return { lambda: new Float64Array(d * d), eta: new Float64Array(d), visitors: 0, conversions: 0, folds: 0 };
}

export function copySite(site: Site): Site {
  return { ...site, lambda: site.lambda.slice(), eta: site.eta.slice() };
}

export function initialState(design: Design, _settings?: PageSettings): ModelState {
  return { version: 1, featureNames: design.featureNames.slice(), lastFoldAt: null, sites: new Map(), dominated: new Map(), segmentSpread: null };
}

interface SerializedSite {
  segment: string;
  lambdaUpper: number[];
  eta: number[];
  visitors: number;
  conversions: number;
  folds: number;
}
interface SerializedState {
  version: 1;
  featureNames: string[];
  lastFoldAt: number | null;
  sites: SerializedSite[];
  dominated: Record<string, Record<string, number>>;
  /** Absent in snapshots written before the spread was learned. */
  segmentSpread?: number | null;
  /** Absent in snapshots written before the settle rule had hysteresis. */
  settled?: string[];
}

export function serializeState(state: ModelState): SerializedState {
  const d = state.featureNames.length;
  const sites: SerializedSite[] = [];
  for (const [segment, site] of state.sites) {
    const lambdaUpper: number[] = [];
    for (let i = 0; i < d; i++) for (let j = i; j < d; j++) lambdaUpper.push(site.lambda[i * d + j]);
    sites.push({ segment, lambdaUpper, eta: Array.from(site.eta), visitors: site.visitors, conversions: site.conversions, folds: site.folds });
  }
  const dominated: Record<string, Record<string, number>> = {};
  for (const [segment, counts] of state.dominated) dominated[segment] = Object.fromEntries(counts);
  return { version: 1, featureNames: state.featureNames.slice(), lastFoldAt: state.lastFoldAt, sites, dominated, segmentSpread: state.segmentSpread, settled: state.settled ?? [] };
}

export function deserializeState(json: unknown): ModelState {
  const bad = (reason: string) => fail("INVALID_MODEL_STATE", { reason });
  const s = json as SerializedState;
  if (s === null || typeof s !== "object" || s.version !== 1) throw bad("unknown format version");
  if (!Array.isArray(s.featureNames) || !s.featureNames.every((x) => typeof x === "string")) throw bad("featureNames missing");
  if (s.lastFoldAt !== null && typeof s.lastFoldAt !== "number") throw bad("lastFoldAt must be a number or null");
  if (!Array.isArray(s.sites)) throw bad("sites missing");
  const d = s.featureNames.length;
  const finite = (xs: unknown, length: number, what: string): number[] => {
    if (!Array.isArray(xs) || xs.length !== length || !xs.every((x) => typeof x === "number" && Number.isFinite(x))) {
      throw bad(`${what} must be ${length} finite numbers`);
    }
    return xs as number[];
  };
  const sites = new Map<string, Site>();
  for (const raw of s.sites) {
    if (raw === null || typeof raw !== "object" || typeof raw.segment !== "string") throw bad("a site has no segment");
    const upper = finite(raw.lambdaUpper, (d * (d + 1)) / 2, `site "${raw.segment}" lambdaUpper`);
    const lambda = new Float64Array(d * d);
    let k = 0;
    for (let i = 0; i < d; i++) {
      for (let j = i; j < d; j++) {
        lambda[i * d + j] = upper[k];
        lambda[j * d + i] = upper[k++];
      }
    }
    const [visitors, conversions, folds] = [raw.visitors, raw.conversions, raw.folds].map((x) => {
      if (typeof x !== "number" || !Number.isFinite(x) || x < 0) throw bad(`site "${raw.segment}" counts must be non-negative numbers`);
      return x;
    });
    sites.set(raw.segment, { lambda, eta: Float64Array.from(finite(raw.eta, d, `site "${raw.segment}" eta`)), visitors, conversions, folds });
  }
  const dominated = new Map<string, Map<string, number>>();
  if (s.dominated !== null && typeof s.dominated === "object") {
    for (const [segment, counts] of Object.entries(s.dominated)) {
      if (counts === null || typeof counts !== "object") throw bad(`retirement counters of "${segment}" malformed`);
      dominated.set(segment, new Map(Object.entries(counts).filter((e): e is [string, number] => typeof e[1] === "number")));
    }
  }
  const segmentSpread = s.segmentSpread ?? null;
  if (segmentSpread !== null && !(typeof segmentSpread === "number" && Number.isFinite(segmentSpread) && segmentSpread >= 0)) {
    throw bad("segmentSpread must be a non-negative number or null");
  }
  const settled = s.settled ?? [];
  if (!Array.isArray(settled) || !settled.every((x) => typeof x === "string")) throw bad("settled must be a list of segment keys");
  return { version: 1, featureNames: s.featureNames.slice(), lastFoldAt: s.lastFoldAt, sites, dominated, segmentSpread, settled: settled.slice() };
}

/** Throws INVALID_MODEL_STATE when a state was built for a different design. */
export function checkStateMatches(state: ModelState, design: Design): void {
  const a = state.featureNames;
  const b = design.featureNames;
  if (a.length !== b.length || a.some((name, i) => name !== b[i])) {
    throw fail("INVALID_MODEL_STATE", { reason: "it was built for a different page definition; remap it first (remapState)" });
  }
}
