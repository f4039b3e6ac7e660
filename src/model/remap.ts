/**
 * Carrying a page's learning across a definition change (levels or factors added or removed,
 * interaction pairs switched). A feature survives when it means the same in both designs: its
 * factor(s) and level(s) exist in both and the factors' reference (first) levels did not change;
 * the intercept survives when no surviving factor changed its reference level.
 *
 * The data are the counts (counts.ts), so an edit re-keys them (combinationKey.ts `rekey`): a
 * combination keeps its counts when all its levels still exist — whatever changed in the features,
 * reference levels or interaction pairs, since counts are free of any encoding; counts from before a
 * factor was added count as that factor's first level; combinations that differ only in a removed
 * factor merge; counts of a removed level are dropped (those visitors saw a page that can no longer
 * be shown). Each segment's mode is carried over for the surviving features (new ones start at 0)
 * only as the next fit's warm start: the fold that follows every edit refits from the counts.
 * Retirement counters restart.
 */
import { rekey } from "./combinationKey.ts";
import { addCounts } from "./counts.ts";
import type { Design } from "./design.ts";
import type { PageSettings } from "./settings.ts";
import { checkStateMatches, type ModelState, type SegmentData, segmentData } from "./state.ts";

/** Identity of each feature as a string that is equal across designs iff the meaning is equal. */
function identities(design: Design): string[] {
  const ids = ["(intercept)"];
  design.factors.forEach((factor) => factor.levels.slice(1).forEach((level) => ids.push(JSON.stringify([[factor.name, level]]))));
  design.pairs.forEach(([i, j]) => {
    for (let a = 1; a < design.sizes[i]; a++) {
      for (let b = 1; b < design.sizes[j]; b++) {
        const parts = [[design.factors[i].name, design.factors[i].levels[a]], [design.factors[j].name, design.factors[j].levels[b]]];
        parts.sort((x, y) => (x[0] < y[0] ? -1 : 1));
        ids.push(JSON.stringify(parts));
      }
    }
  });
  return ids;
}

/** For each old feature, its index in the new design or −1 when it does not survive. */
export function featureMapping(oldDesign: Design, newDesign: Design): Int32Array {
  const newRef = new Map(newDesign.factors.map((f) => [f.name, f.levels[0]]));
  const refChanged = new Set(oldDesign.factors.filter((f) => newRef.has(f.name) && newRef.get(f.name) !== f.levels[0]).map((f) => f.name));
  const newIndex = new Map(identities(newDesign).map((id, i) => [id, i]));
  return Int32Array.from(identities(oldDesign), (id, i) => {
    if (i === 0) return refChanged.size === 0 ? 0 : -1;
    const parts = JSON.parse(id) as [string, string][];
    if (parts.some(([factor]) => refChanged.has(factor))) return -1;
    return newIndex.get(id) ?? -1;
  });
}

export function remapState(state: ModelState, oldDesign: Design, newDesign: Design, _settings?: PageSettings): ModelState {
  checkStateMatches(state, oldDesign);
  const mapping = featureMapping(oldDesign, newDesign);
  const segments = new Map<string, SegmentData>();
  for (const [segment, data] of state.segments) {
    const added = new Map<string, [number, number]>();
    data.counts.keys.forEach((key, r) => {
      const next = rekey(newDesign, key);
      if (next === null) return;
      const entry = added.get(next) ?? [0, 0];
      entry[0] += data.counts.n[r];
      entry[1] += data.counts.k[r];
      added.set(next, entry);
    });
    const mode = new Float64Array(newDesign.dimension);
    mapping.forEach((to, from) => {
      if (to >= 0) mode[to] = data.mode[from];
    });
    segments.set(segment, segmentData(newDesign, addCounts(newDesign, undefined, 1, added), mode, data.site.folds));
  }
  return { version: 2, featureNames: newDesign.featureNames.slice(), lastFoldAt: state.lastFoldAt, segments, dominated: new Map(), segmentSpread: state.segmentSpread, priorScales: state.priorScales };
}
