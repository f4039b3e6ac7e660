/**
 * Rebuilding a version-1 snapshot (accumulated Gaussian sites, state.ts) as a version-2 state
 * (counts). Sites cannot give the counts back, so the counts are replayed from what every past
 * fold consumed — the stored picks, grouped by the fold version that counted each trial and each
 * conversion — with the forgetting each fold applied (2^(−Δt/half-life) between consecutive fold
 * times), and then refitted (refit.ts). Nothing learned is lost: the counts are the data the sites
 * summarised. Segments keep the routing the old state had (its sites' names are the tracked
 * segments), and rows written before a page edit are re-keyed as the edit would re-key them.
 * The retirement counters, the last fold time and the learned spread carry over.
 */
import { rekey } from "./combinationKey.ts";
import { addCounts } from "./counts.ts";
import type { Design } from "./design.ts";
import { groupRows, type FoldRow } from "./fold.ts";
import { forgettingWeight } from "./forgetting.ts";
import { refit, type RefitInput } from "./refit.ts";
import type { PageSettings } from "./settings.ts";
import { checkStateMatches, type ModelState, OVERFLOW_SITE, stateHeader } from "./state.ts";

/** The rows one past fold consumed, at the time it ran (ms). */
export interface PastFold {
  at: number;
  rows: FoldRow[];
}

export function upgradeState(legacy: unknown, design: Design, settings: PageSettings, folds: PastFold[]): ModelState {
  const header = stateHeader(legacy);
  checkStateMatches(header, design);
  const sites = (legacy as { sites?: unknown }).sites;
  const tracked = new Map<string, true>();
  if (Array.isArray(sites)) for (const site of sites) if (typeof site?.segment === "string") tracked.set(site.segment, true);
  // Every segment the old state learned from has a site of its own or went to the overflow site.
  const admitted = [...tracked.keys()].filter((segment) => segment !== OVERFLOW_SITE).length;
  const inputs = new Map<string, RefitInput>();
  let last: number | null = null;
  for (const fold of [...folds].sort((a, b) => a.at - b.at)) {
    const w = forgettingWeight(last, fold.at, settings.halfLifeDays);
    last = fold.at;
    const rows: FoldRow[] = [];
    for (const row of fold.rows) {
      const combination = rekey(design, row.combination);
      if (combination !== null) rows.push({ ...row, combination });
    }
    const grouped = groupRows(design, rows, tracked, admitted).bySegment;
    for (const [segment, input] of inputs) {
      const added = grouped.get(segment);
      inputs.set(segment, { counts: addCounts(design, input.counts, w, added ?? new Map()), mode: null, folds: input.folds + (added ? 1 : 0) });
    }
    for (const [segment, added] of grouped) {
      if (!inputs.has(segment)) inputs.set(segment, { counts: addCounts(design, undefined, 1, added), mode: null, folds: 1 });
    }
  }
  // Forgetting from the last fold that consumed picks to the legacy state's last fold.
  if (last !== null && header.lastFoldAt !== null) {
    const w = forgettingWeight(last, header.lastFoldAt, settings.halfLifeDays);
    for (const [segment, input] of inputs) inputs.set(segment, { ...input, counts: addCounts(design, input.counts, w, new Map()) });
  }
  const fit = refit(design, settings, inputs, { tau: header.segmentSpread, learn: true });
  return { version: 2, ...header, segments: fit.segments, segmentSpread: fit.posteriors.segmentSpread, priorScales: fit.posteriors.priorScales };
}
