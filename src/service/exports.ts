/**
 * The export for the page builder or ad operations: per segment (and pooled) the chosen
 * combination — the leader, or the baseline before the first fold — with each level's value,
 * as JSON or as RFC 4180 CSV. The probability of being best comes with its Monte-Carlo standard
 * error and 95% Wilson bounds (probability_best_se, probability_best_mc_lower/_upper).
 */
import type { MonteCarloError } from "../model/index.ts";
import type { SegmentReport, ReportService } from "./reports.ts";
import { levelsOf } from "./definition.ts";
import type { PageService } from "./pages.ts";
import { toCsv } from "./csv.ts";

export interface ExportRow {
  segment: string; context: Record<string, string>; status: SegmentReport["status"]; combination: string;
  levels: Record<string, { level: string; value: string }>;
  probabilityBest: number | null; probabilityBestError: MonteCarloError | null; rate: { mean: number; lower: number; upper: number } | null;
}
export interface PageExport { page: string; modelVersion: number; generatedAt: string; segments: ExportRow[] }

export class ExportService {
  constructor(private readonly pages: PageService, private readonly reports: ReportService) {}

  async json(key: string): Promise<PageExport> {
    const page = await this.pages.stored(key);
    const report = await this.reports.report(key);
    const row = (s: SegmentReport): ExportRow => {
      const combination = s.leader?.combination ?? page.baseline;
      return {
        segment: s.segment, context: s.context, status: s.status, combination, levels: levelsOf(page, combination),
        probabilityBest: s.leader?.probabilityBest ?? null, probabilityBestError: s.leader?.probabilityBestError ?? null, rate: s.leader?.rate ?? null,
      };
    };
    return { page: key, modelVersion: report.modelVersion, generatedAt: report.generatedAt, segments: [...report.segments, report.pooled].map(row) };
  }

  async csv(key: string): Promise<string> {
    const data = await this.json(key);
    const page = await this.pages.stored(key);
    const factors = page.factors.map((f) => f.name);
    const header = ["segment", "status", "combination", "probability_best", "probability_best_se", "probability_best_mc_lower",
      "probability_best_mc_upper", "rate_mean", "rate_lower", "rate_upper",
      ...factors.flatMap((f) => [f, `${f}_value`])];
    const rows = data.segments.map((s) => [
      s.segment, s.status, s.combination, s.probabilityBest, s.probabilityBestError?.standardError ?? null,
      s.probabilityBestError?.lower ?? null, s.probabilityBestError?.upper ?? null, s.rate?.mean ?? null, s.rate?.lower ?? null, s.rate?.upper ?? null,
      ...factors.flatMap((f) => [s.levels[f]?.level ?? null, s.levels[f]?.value ?? null]),
    ]);
    return toCsv(header, rows);
  }
}
