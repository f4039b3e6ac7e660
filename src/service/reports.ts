/**
 * The page report: per segment and pooled — visitors, conversions, status, leader and top
 * combinations (probability of being best, rate interval, each level's value), retired
 * combinations with reasons, expected loss, factor effects, the naive leader-vs-baseline
 * cross-check with its warning, prequential calibration of the rates predicted when each pick was
 * served (scored once its window closed; binned in SQL) — and the allocation history for charts.
 * The figures are the engine's, stored by the fold loop; this module only joins them with counts.
 * Shape: the contract's "Report JSON shape".
 */
import type { Pool } from "pg";
import { calibration, crossCheck, LATEST_PICKS, MAX_BINS, monteCarloError, PICKS_PER_BIN } from "../model/index.ts";
import type { Allocation, CombinationSummary, FactorEffect, SegmentSummary } from "../model/index.ts";
import { loadRetired, loadSnapshot } from "../store/repositories/folds.ts";
import { allocationHistory, calibrationBins, pickCounts, segmentContexts, type CountRow } from "../store/repositories/reports.ts";
import type { StoredPage } from "../store/repositories/pages.ts";
import { levelsOf, settingsOf } from "./definition.ts";
import { asServiceError } from "./errors.ts";
import type { PageService } from "./pages.ts";

const HISTORY_POINTS = 200;
const HISTORY_SERIES = 6;
const MIN_SHARE = 0.001;

export interface CombinationReport extends CombinationSummary {
  levels: Record<string, { level: string; value: string }>;
  visitors: number;
  conversions: number;
}

export interface SegmentReport {
  segment: string; context: Record<string, string>;
  visitors: number; conversions: number; folded: number;
  status: "waiting" | "exploring" | "settled"; settledBy: "probability" | "loss" | null;
  leader: CombinationReport | null; baseline: CombinationReport | null; top: CombinationReport[];
  expectedLoss: number | null; expectedLossError: number | null; expectedLossFraction: number | null;
  effects: SegmentSummary["effects"];
  segmentSpread: number | null;
  retired: { combination: string; reason: string; figures: Record<string, unknown>; retiredAt: string; reinstatedAt: string | null; reinstateReason: string | null }[];
  crossCheck: (ReturnType<typeof crossCheck> & { leader: Arm; baseline: Arm }) | null;
  calibration: ReturnType<typeof calibration>;
  allocation: Record<string, number>;
}

interface Arm { visitors: number; conversions: number }

export interface Report {
  page: string; status: StoredPage["status"]; modelVersion: number; lastFoldAt: string | null; generatedAt: string;
  settings: ReturnType<typeof settingsOf>;
  totals: { visitors: number; conversions: number; pending: number };
  segments: SegmentReport[]; pooled: SegmentReport;
  allocationHistory: Record<string, { version: number; at: string; shares: Record<string, number> }[]>;
}

export class ReportService {
  constructor(private readonly pool: Pool, private readonly pages: PageService) {}

  async report(key: string): Promise<Report> {
    try {
      const page = await this.pages.stored(key);
      const snapshot = page.modelVersion > 0 ? await loadSnapshot(this.pool, page.id, page.modelVersion) : null;
      const summaries = (snapshot?.summary ?? {}) as Record<string, SegmentSummary>;
      const counts = await pickCounts(this.pool, page.id);
      const contexts = await segmentContexts(this.pool, page.id);
      const retired = await loadRetired(this.pool, page.id);
      const history = await allocationHistory(this.pool, page.id, HISTORY_POINTS);
      const bins = await calibrationBins(this.pool, page.id, { maxBins: MAX_BINS, perBin: PICKS_PER_BIN, latest: LATEST_PICKS });
      const current = new Map(history.filter((h) => h.version === page.modelVersion).map((h) => [h.segment, h.allocation as Allocation]));

      // Summaries stored before issue 10 carry no Monte-Carlo error: it is the binomial one of the page's draws.
      const samples = settingsOf(page).samples;
      const segmentKeys = [...new Set([...contexts.keys(), ...counts.map((c) => c.segment).filter((s) => s !== "*")])];
      const build = (segment: string, rows: CountRow[]): SegmentReport => {
        const summary = summaries[segment] as SegmentSummary | undefined;
        const observed = new Map<string, Arm>();
        for (const r of rows) {
          const arm = observed.get(r.combination) ?? { visitors: 0, conversions: 0 };
          arm.visitors += r.visitors;
          arm.conversions += r.conversions;
          observed.set(r.combination, arm);
        }
        const describe = (c: CombinationSummary | undefined): CombinationReport | null => c ? {
          ...c, probabilityBestError: c.probabilityBestError ?? monteCarloError(c.probabilityBest, samples),
          levels: levelsOf(page, c.combination),
          visitors: observed.get(c.combination)?.visitors ?? 0, conversions: observed.get(c.combination)?.conversions ?? 0,
        } : null;
        const leader = describe(summary?.leader);
        const baseline = describe(summary?.baseline);
        return {
          segment, context: segment === "*" ? {} : contexts.get(segment) ?? {},
          visitors: sum(rows, "visitors"), conversions: sum(rows, "conversions"), folded: sum(rows, "folded"),
          status: summary ? summary.status : "waiting", settledBy: summary?.settledBy ?? null,
          leader, baseline, top: (summary?.top ?? []).map((c) => describe(c)!),
          expectedLoss: summary?.expectedLoss ?? null, expectedLossError: summary?.expectedLossError ?? null,
          expectedLossFraction: summary?.expectedLossFraction ?? null,
          effects: (summary?.effects ?? []).map(upgradeEffect),
          segmentSpread: summary?.segmentSpread ?? null,
          retired: retired.filter((r) => r.segment === segment).map((r) => {
            const { reinstateReason, ...figures } = r.figures as Record<string, unknown>;
            return {
              combination: r.combination, reason: r.reason, figures, retiredAt: r.retiredAt.toISOString(),
              reinstatedAt: r.reinstatedAt?.toISOString() ?? null, reinstateReason: typeof reinstateReason === "string" ? reinstateReason : null,
            };
          }),
          crossCheck: naiveCheck(leader, baseline),
          calibration: calibration(bins.filter((b) => b.segment === (segment === "*" ? null : segment))),
          allocation: shares(current.get(segment), null),
        };
      };
      const segments = segmentKeys.map((s) => build(s, counts.filter((c) => c.segment === s)))
        .sort((a, b) => b.visitors - a.visitors || a.segment.localeCompare(b.segment));
      const pooled = build("*", counts);

      const series: Report["allocationHistory"] = {};
      for (const h of history) {
        const summary = summaries[h.segment];
        const keys = (summary?.top ?? []).slice(0, HISTORY_SERIES).map((c) => c.combination);
        (series[h.segment] ??= []).push({ version: h.version, at: h.at.toISOString(), shares: shares(h.allocation as Allocation, keys) });
      }
      return {
        page: page.key, status: page.status, modelVersion: page.modelVersion,
        lastFoldAt: page.lastFoldAt?.toISOString() ?? null, generatedAt: new Date().toISOString(), settings: settingsOf(page),
        totals: { visitors: sum(counts, "visitors"), conversions: sum(counts, "conversions"), pending: sum(counts, "pending") },
        segments, pooled, allocationHistory: series,
      };
    } catch (error) {
      throw asServiceError(error);
    }
  }
}

/** A factor effect stored before issue 10 (odds ratios only) in today's shape, with no average effect. */
function upgradeEffect(effect: FactorEffect): FactorEffect {
  return {
    ...effect,
    levels: effect.levels.map((l) => {
      if ("oddsRatioAtFirstLevels" in l) return l;
      const old = l as unknown as { level: string; oddsRatio: number; lower: number; upper: number };
      return { level: old.level, difference: null, relative: null, contexts: 0, oddsRatioAtFirstLevels: { estimate: old.oddsRatio, lower: old.lower, upper: old.upper } };
    }),
  };
}

const sum = (rows: CountRow[], field: "visitors" | "conversions" | "folded" | "pending") => rows.reduce((s, r) => s + r[field], 0);

/** Serving shares of an allocation: every listed combination (≥ 0.1%), or only `keys` plus "other". */
function shares(allocation: Allocation | undefined, keys: string[] | null): Record<string, number> {
  if (!allocation) return {};
  const out: Record<string, number> = {};
  let listed = 0;
  allocation.keys.forEach((key, i) => {
    const p = allocation.propensities[i];
    if (keys === null ? p >= MIN_SHARE : keys.includes(key)) {
      out[key] = p;
      listed += p;
    }
  });
  if (keys !== null) out.other = Math.max(0, 1 - listed);
  return out;
}

/** The naive tests need both arms served at least once. */
function naiveCheck(leader: CombinationReport | null, baseline: CombinationReport | null): SegmentReport["crossCheck"] {
  if (!leader || !baseline || leader.combination === baseline.combination || leader.visitors === 0 || baseline.visitors === 0) return null;
  const a = { visitors: leader.visitors, conversions: leader.conversions };
  const b = { visitors: baseline.visitors, conversions: baseline.conversions };
  return { leader: a, baseline: b, ...crossCheck(a, b) };
}
