/**
 * One fold cycle — the only entry point the server's fold loop and the simulator use:
 *   1. forgetting: every segment's counts are scaled by 2^(−Δt/half-life) (forgetting.ts);
 *   2. fold: the rows are routed and merged per (segment, combination) and added to the counts
 *      (fold.ts, counts.ts);
 *   3. refit: every segment's mode of prior × all its counts, the pooled model and the segment
 *      spread τ are fitted jointly from the counts, warm-started from the last cycle's modes and τ
 *      (refit.ts, hierarchy.ts, spreadSearch.ts), giving the posteriors of the pooled model, of a
 *      new segment ("*") and of every segment with data;
 *   4. per requested segment and "*": Thompson allocation, summary and retirement
 *      (allocateSegment.ts). Segments without a site of their own are served "*"'s allocation.
 * Pure: `now` and `seed` are inputs, the input state is not modified, and each segment draws from
 * its own stream derived from (seed, segment key), so results do not depend on segment order.
 */
import type { Allocation } from "./allocation.ts";
import { allocateSegment } from "./allocateSegment.ts";
import type { Design } from "./design.ts";
import { addCounts } from "./counts.ts";
import { groupRows, type FoldRow } from "./fold.ts";
import { forgettingWeight } from "./forgetting.ts";
import type { Posteriors } from "./hierarchy.ts";
import { refit, type RefitInput } from "./refit.ts";
import type { RetiredEntry } from "./retirement.ts";
import { createRng, hashString, mix32 } from "./rng.ts";
import type { PageSettings } from "./settings.ts";
import { checkStateMatches, type ModelState, OVERFLOW_SITE } from "./state.ts";
import type { SegmentSummary } from "./summary.ts";

/** The allocation and summary key of the pooled model (served to unseen segments). */
export const POOLED = "*";

export interface FoldCycleInput {
  design: Design;
  settings: PageSettings;
  state: ModelState;
  rows: FoldRow[];
  /** Current time in ms (drives forgetting and the retirement timestamps). */
  now: number;
  /** Segments to allocate for ("*" is always added). */
  segments: string[];
  /** The current retired list, including reinstated history. */
  retired: RetiredEntry[];
  seed: number;
  /** Serve each segment's leader only. */
  frozen?: boolean;
  /**
   * false: leave out "*"'s allocation and summary unless a requested segment without a site needs
   * them (the simulator never reads them; the server always wants them). Default true.
   */
  pooled?: boolean;
  /**
   * false: summaries carry no factor effects (averageEffects.ts costs a rate per draw and context,
   * the largest share of a small page's fold; the simulator never reads them). Default true.
   */
  effects?: boolean;
}

export interface FoldCycleOutput {
  state: ModelState;
  allocations: Record<string, Allocation>;
  summaries: Record<string, SegmentSummary>;
  retired: RetiredEntry[];
  /** Rows whose combination is not part of the design (for example a level removed since the pick). */
  skipped: { rows: number; visitors: number };
}

/**
 * Steps 1–3: forgetting, the fold and the refit, without allocating (the benchmark's fold, and
 * callers that only need the updated state and posteriors).
 */
export function foldState(input: Pick<FoldCycleInput, "design" | "settings" | "state" | "rows" | "now">): { state: ModelState; posteriors: Posteriors; sweeps: number; skipped: FoldCycleOutput["skipped"] } {
  const { design, settings, now, state } = input;
  checkStateMatches(state, design);
  const w = forgettingWeight(state.lastFoldAt, now, settings.halfLifeDays);
  const grouped = groupRows(design, input.rows, state.segments, settings.maxSegments);
  const inputs = new Map<string, RefitInput>();
  const none = new Map<string, [number, number]>();
  for (const [segment, data] of state.segments) {
    const added = grouped.bySegment.get(segment);
    inputs.set(segment, { counts: w === 1 && !added ? data.counts : addCounts(design, data.counts, w, added ?? none), mode: data.mode, folds: data.site.folds + (added ? 1 : 0) });
  }
  for (const [segment, added] of grouped.bySegment) {
    if (!state.segments.has(segment)) inputs.set(segment, { counts: addCounts(design, undefined, 1, added), mode: null, folds: 1 });
  }
  const fit = refit(design, settings, inputs, { tau: state.segmentSpread, scales: state.priorScales, learn: true });
  const lastFoldAt = Math.max(now, state.lastFoldAt ?? now);
  return {
    state: { ...state, segments: fit.segments, lastFoldAt, segmentSpread: fit.posteriors.segmentSpread, priorScales: fit.posteriors.priorScales },
    posteriors: fit.posteriors,
    sweeps: fit.sweeps,
    skipped: grouped.skipped,
  };
}

export function foldCycle(input: FoldCycleInput): FoldCycleOutput {
  const { design, settings, now } = input;
  const folded = foldState(input);
  const post = folded.posteriors;
  const requested = [...new Set(input.segments)].filter((s) => s !== POOLED && s !== OVERFLOW_SITE);
  const own = requested.filter((s) => folded.state.segments.has(s));

  const activeBySegment = new Map<string, Map<string, RetiredEntry>>();
  for (const entry of input.retired) {
    if (entry.reinstatedAt !== null) continue;
    let m = activeBySegment.get(entry.segment);
    if (!m) activeBySegment.set(entry.segment, (m = new Map()));
    m.set(entry.combination, entry);
  }

  const allocations: Record<string, Allocation> = {};
  const summaries: Record<string, SegmentSummary> = {};
  const dominated = new Map(folded.state.dominated);
  const reinstatedBySegment = new Map<string, Map<string, string>>();
  const newlyRetired: RetiredEntry[] = [];
  const withPooled = input.pooled !== false || own.length < requested.length;
  // Settle hysteresis (settleRule.ts): each segment's status after the last cycle goes in, the new one comes out.
  const wasSettled = new Set(folded.state.settled ?? []);
  const settled: string[] = [];
  const rounds = withPooled ? [POOLED, ...own] : own;
  for (const segment of wasSettled) if (!rounds.includes(segment)) settled.push(segment); // not recomputed: keeps its status
  for (const segment of rounds) {
    const round = allocateSegment({
      design,
      settings,
      segment,
      posterior: segment === POOLED ? post.star : post.segments.get(segment)!,
      segmentSpread: post.segmentSpread,
      rng: createRng(mix32(input.seed) ^ hashString(segment)),
      now,
      frozen: input.frozen === true,
      active: activeBySegment.get(segment) ?? new Map(),
      counters: folded.state.dominated.get(segment) ?? new Map(),
      wasSettled: wasSettled.has(segment),
      effects: input.effects,
    });
    if (round.summary.status === "settled") settled.push(segment);
    allocations[segment] = round.allocation;
    summaries[segment] = round.summary;
    if (round.counters.size > 0) dominated.set(segment, round.counters);
    else dominated.delete(segment);
    for (const entry of round.newlyRetired) newlyRetired.push(entry);
    if (round.reinstated.size > 0) reinstatedBySegment.set(segment, round.reinstated);
  }
  for (const segment of requested) {
    if (allocations[segment]) continue;
    allocations[segment] = { ...allocations[POOLED], segment };
    summaries[segment] = { ...summaries[POOLED], segment };
  }

  const retired = input.retired.map((entry) => {
    const reason = entry.reinstatedAt === null ? reinstatedBySegment.get(entry.segment)?.get(entry.combination) : undefined;
    return reason === undefined ? entry : { ...entry, reinstatedAt: now, reinstateReason: reason };
  });
  // a loop, not push(...): a large page retires more combinations at once than a call takes arguments
  for (const entry of newlyRetired) retired.push(entry);

  return { state: { ...folded.state, dominated, settled }, allocations, summaries, retired, skipped: folded.skipped };
}
