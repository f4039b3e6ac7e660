/**
 * The model state of one page. Per segment (DESIGN.md "Round 2 design decisions"):
 *   - its counts (counts.ts): the decayed (n, k) of every combination folded — the whole data;
 *   - its mode θ̂_s: where the last fold found the mode of the segment's prior × the likelihood of
 *     all its counts (refit.ts), the warm start of the next fold;
 *   - its site (Λ_s, η_s): the likelihood's Gaussian approximation at θ̂_s (newton.ts
 *     `likelihoodSite`), a pure function of counts and mode, through which the hierarchy
 *     (hierarchy.ts) sees the segment's data. Sites are derived, never stored.
 * Plus the consecutive-fold counters the retirement rule needs, the learned segment spread and
 * prior scales.
 * Only data lives here: the prior is recomputed from the settings, so a changed prior setting takes
 * effect at the next fold and forgetting never erodes the prior.
 *
 * The state is treated as immutable: functions return new states. It serialises to plain JSON;
 * format version 2 (counts). Version 1 held accumulated sites instead of counts; such snapshots are
 * recognised by `isLegacyState` and rebuilt from the stored picks by the fold service
 * (upgradeState.ts), since the sites alone cannot give the counts back.
 */
import { fail } from "../errors.ts";
import { addCounts, featuresOf, rowBlock, type SegmentCounts } from "./counts.ts";
import type { Design } from "./design.ts";
import { likelihoodSite } from "./newton.ts";
import type { PriorScales } from "./priorScaleSearch.ts";
import type { PageSettings } from "./settings.ts";

/** Segment key of the shared site of segments beyond maxSegments (served by the pooled model). */
export const OVERFLOW_SITE = "*";

export interface Site {
  /** Λ_s, d×d row-major. */
  lambda: Float64Array;
  /** η_s, length d. */
  eta: Float64Array;
  /** Effective visitors and conversions (after forgetting). */
  visitors: number;
  conversions: number;
  folds: number;
}

/** One segment's data: its counts, the mode they were last fitted at, and the derived site. */
export interface SegmentData {
  counts: SegmentCounts;
  mode: Float64Array;
  site: Site;
}

export interface ModelState {
  version: 2;
  featureNames: string[];
  /** `now` of the last fold cycle (ms), for forgetting; null before the first. */
  lastFoldAt: number | null;
  segments: Map<string, SegmentData>;
  /**
   * segment → combination key → consecutive folds the combination met the retirement rule, or,
   * once retired, the folds its bound part has failed (retirement.ts).
   */
  dominated: Map<string, Map<string, number>>;
  /**
   * τ the last fold cycle learned (spreadSearch.ts): the posteriors served until the next fold use
   * it, and the next search starts from it. null before the first cycle.
   */
  segmentSpread: number | null;
  /** The prior scales' multiples the last fold cycle learned (priorScaleSearch.ts); null before the first. */
  priorScales: PriorScales | null;
  /** Segments settled after the last cycle, for the settle rule's hysteresis (settleRule.ts); absent = none. */
  settled?: string[];
}

/** A segment's data with its site computed at `mode`. */
export function segmentData(design: Design, counts: SegmentCounts, mode: Float64Array, folds: number): SegmentData {
  const { lambda, eta } = likelihoodSite(design.dimension, rowBlock(design, counts), mode);
  return { counts, mode, site: { lambda, eta, visitors: counts.visitors, conversions: counts.conversions, folds } };
}

/** The sites of every segment, as the hierarchy reads them. */
export function sitesOf(state: ModelState): Map<string, Site> {
  const sites = new Map<string, Site>();
  for (const [segment, data] of state.segments) sites.set(segment, data.site);
  return sites;
}

export function initialState(design: Design, _settings?: PageSettings): ModelState {
  return { version: 2, featureNames: design.featureNames.slice(), lastFoldAt: null, segments: new Map(), dominated: new Map(), segmentSpread: null, priorScales: null };
}

interface SerializedSegment {
  segment: string;
  combinations: string[];
  n: number[];
  k: number[];
  mode: number[];
  folds: number;
}
interface SerializedState {
  version: 2;
  featureNames: string[];
  lastFoldAt: number | null;
  segments: SerializedSegment[];
  dominated: Record<string, Record<string, number>>;
  segmentSpread: number | null;
  priorScales?: PriorScales | null;
  /** Absent in snapshots written before the settle rule had hysteresis. */
  settled?: string[];
}

export function serializeState(state: ModelState): SerializedState {
  const segments: SerializedSegment[] = [];
  for (const [segment, data] of state.segments) {
    const { counts } = data;
    segments.push({ segment, combinations: counts.keys.slice(), n: Array.from(counts.n), k: Array.from(counts.k), mode: Array.from(data.mode), folds: data.site.folds });
  }
  return { version: 2, featureNames: state.featureNames.slice(), lastFoldAt: state.lastFoldAt, segments, dominated: serializeDominated(state.dominated), segmentSpread: state.segmentSpread, priorScales: state.priorScales, settled: state.settled ?? [] };
}

function serializeDominated(dominated: ModelState["dominated"]): Record<string, Record<string, number>> {
  const out: Record<string, Record<string, number>> = {};
  for (const [segment, counts] of dominated) out[segment] = Object.fromEntries(counts);
  return out;
}

const bad = (reason: string) => fail("INVALID_MODEL_STATE", { reason });

/** True for a snapshot of format version 1 (accumulated sites, no counts): see upgradeState.ts. */
export function isLegacyState(json: unknown): boolean {
  return json !== null && typeof json === "object" && (json as { version?: unknown }).version === 1;
}

/** The fields every format version shares, checked. */
export function stateHeader(json: unknown): Pick<ModelState, "featureNames" | "lastFoldAt" | "dominated" | "segmentSpread" | "priorScales" | "settled"> {
  const s = json as Partial<SerializedState>;
  if (s === null || typeof s !== "object") throw bad("not an object");
  if (!Array.isArray(s.featureNames) || !s.featureNames.every((x) => typeof x === "string")) throw bad("featureNames missing");
  if (s.lastFoldAt !== null && typeof s.lastFoldAt !== "number") throw bad("lastFoldAt must be a number or null");
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
  const scales = s.priorScales ?? null;
  const multiple = (x: unknown) => typeof x === "number" && Number.isFinite(x) && x > 0;
  if (scales !== null && !(typeof scales === "object" && multiple(scales.main) && multiple(scales.interaction))) {
    throw bad("priorScales must hold positive multiples main and interaction, or be null");
  }
  const priorScales = scales === null ? null : { main: scales.main, interaction: scales.interaction };
  const settled = s.settled ?? [];
  if (!Array.isArray(settled) || !settled.every((x) => typeof x === "string")) throw bad("settled must be a list of segment keys");
  return { featureNames: s.featureNames.slice(), lastFoldAt: s.lastFoldAt ?? null, dominated, segmentSpread, priorScales, settled: settled.slice() };
}

/** Reads a version-2 snapshot for `design` (the design it was written for). */
export function deserializeState(json: unknown, design: Design): ModelState {
  const s = json as SerializedState;
  if (s === null || typeof s !== "object" || s.version !== 2) {
    throw bad(isLegacyState(json) ? "it is a version-1 snapshot; rebuild it from the stored picks (upgradeState)" : "unknown format version");
  }
  const header = stateHeader(s);
  checkStateMatches({ featureNames: header.featureNames }, design);
  if (!Array.isArray(s.segments)) throw bad("segments missing");
  const d = design.dimension;
  const numbers = (xs: unknown, length: number, what: string): number[] => {
    if (!Array.isArray(xs) || xs.length !== length || !xs.every((x) => typeof x === "number" && Number.isFinite(x))) {
      throw bad(`${what} must be ${length} finite numbers`);
    }
    return xs as number[];
  };
  const segments = new Map<string, SegmentData>();
  for (const raw of s.segments) {
    if (raw === null || typeof raw !== "object" || typeof raw.segment !== "string") throw bad("a segment has no name");
    const name = raw.segment;
    if (!Array.isArray(raw.combinations)) throw bad(`segment "${name}" has no combinations`);
    const rows = raw.combinations.length;
    const n = numbers(raw.n, rows, `segment "${name}" n`);
    const k = numbers(raw.k, rows, `segment "${name}" k`);
    const added = new Map<string, [number, number]>();
    raw.combinations.forEach((key, r) => {
      if (typeof key !== "string" || featuresOf(design, key) === null) throw bad(`segment "${name}" counts a combination that is not on the page: ${String(key)}`);
      if (n[r] < 0 || k[r] < 0) throw bad(`segment "${name}" counts must be non-negative`);
      added.set(key, [n[r], k[r]]);
    });
    if (typeof raw.folds !== "number" || !(raw.folds >= 0)) throw bad(`segment "${name}" folds must be a non-negative number`);
    const mode = Float64Array.from(numbers(raw.mode, d, `segment "${name}" mode`));
    segments.set(name, segmentData(design, addCounts(design, undefined, 1, added), mode, raw.folds));
  }
  return { version: 2, ...header, segments };
}

/** Throws INVALID_MODEL_STATE when a state was built for a different design. */
export function checkStateMatches(state: Pick<ModelState, "featureNames">, design: Design): void {
  const a = state.featureNames;
  const b = design.featureNames;
  if (a.length !== b.length || a.some((name, i) => name !== b[i])) {
    throw fail("INVALID_MODEL_STATE", { reason: "it was built for a different page definition; remap it first (remapState)" });
  }
}
