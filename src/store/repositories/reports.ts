/** Read-only queries behind the report and the export. */
import type { Queryable } from "./sql.ts";

export interface CountRow { segment: string; combination: string; visitors: number; conversions: number; folded: number; foldedConversions: number; pending: number }

/**
 * Served picks per (segment, combination): visitors, conversions inside the window, folded (trials
 * in the model), the folded conversions, and pending: picks whose trial or conversion the next fold
 * will count (repositories/folds.ts).
 */
export async function pickCounts(q: Queryable, pageId: number): Promise<CountRow[]> {
  const { rows } = await q.query<CountRow>(
    `SELECT coalesce(s.key, '*') AS segment, p.combination,
       count(*)::int AS visitors,
       count(p.converted_at)::int AS conversions,
       (count(*) FILTER (WHERE p.state = 'folded'))::int AS folded,
       (count(*) FILTER (WHERE p.conversion_folded_version IS NOT NULL))::int AS "foldedConversions",
       (count(*) FILTER (WHERE p.state = 'open'
          OR (p.state = 'folded' AND p.converted_at IS NOT NULL AND p.conversion_folded_version IS NULL)))::int AS pending
     FROM pick p LEFT JOIN segment s ON s.id = p.segment_id
     WHERE p.page_id = $1 GROUP BY 1, 2`, [pageId]);
  return rows;
}

export async function segmentContexts(q: Queryable, pageId: number): Promise<Map<string, Record<string, string>>> {
  const { rows } = await q.query<{ key: string; context: Record<string, string> }>("SELECT key, context FROM segment WHERE page_id = $1", [pageId]);
  return new Map(rows.map((r) => [r.key, r.context]));
}

export interface AllocationPoint { version: number; segment: string; allocation: unknown; at: Date }

/** Allocation records of at most `points` versions spread evenly over the page's history. */
export async function allocationHistory(q: Queryable, pageId: number, points: number): Promise<AllocationPoint[]> {
  const { rows } = await q.query<{ version: number; segment: string; allocation: unknown; created_at: Date }>(
    `WITH versions AS (SELECT DISTINCT version FROM allocation_record WHERE page_id = $1),
          numbered AS (SELECT version, row_number() OVER (ORDER BY version) - 1 AS i, count(*) OVER () AS total FROM versions),
          chosen AS (SELECT version FROM numbered
                     WHERE total <= $2 OR i = total - 1 OR (i * $2) / total <> ((i - 1) * $2) / total OR i = 0)
     SELECT a.version, a.segment, a.allocation, a.created_at FROM allocation_record a JOIN chosen USING (version)
     WHERE a.page_id = $1 ORDER BY a.version, a.segment`, [pageId, points]);
  return rows.map((r) => ({ version: r.version, segment: r.segment, allocation: r.allocation, at: r.created_at }));
}

export interface CalibrationBinRow {
  /** segment key, "*" for picks served as new traffic; null for the pooled bins over all picks */
  segment: string | null;
  bin: number;
  picks: number; conversions: number;
  sumPredicted: number; minPredicted: number; maxPredicted: number;
  logLoss: number; squaredError: number;
}

/**
 * Bins of the most recent `latest` picks that can be scored — attribution window closed,
 * prediction stored, not set aside — per segment and pooled (segment null), with the totals
 * calibration.ts needs. Picks are first counted per distinct prediction (one per combination,
 * segment and fold), then a prediction whose lower-predicted picks number s of n goes, with all
 * its picks, to bin ⌊s·B/n⌋, B = max(1, min(maxBins, ⌊n/perBin⌋)): equal counts up to ties (the
 * rule of src/model/calibration.ts). A conversion counts when it was reported inside the window
 * (converted_at is only set then). Segments are grouped by id and named at the end, so every sort
 * is on numbers.
 */
export async function calibrationBins(
  q: Queryable, pageId: number, options: { maxBins: number; perBin: number; latest: number },
): Promise<CalibrationBinRow[]> {
  const { rows } = await q.query<CalibrationBinRow>(
    `WITH recent AS (
       SELECT segment_id, predicted_rate AS p, converted_at FROM pick
       WHERE page_id = $1 AND predicted_rate IS NOT NULL AND state <> 'ignored' AND window_ends_at < now()
       ORDER BY window_ends_at DESC, id DESC LIMIT $4),
     tied AS (
       SELECT segment_id, p, count(*)::int AS n, count(converted_at)::int AS k FROM recent GROUP BY 1, 2),
     grouped AS (
       SELECT false AS pooled, segment_id, p, n, k FROM tied
       UNION ALL
       SELECT true, NULL, p, sum(n)::int, sum(k)::int FROM tied GROUP BY p),
     ranked AS (
       SELECT pooled, segment_id, p, n, k,
         sum(n) OVER (PARTITION BY pooled, segment_id ORDER BY p ROWS UNBOUNDED PRECEDING)::bigint - n AS below,
         sum(n) OVER (PARTITION BY pooled, segment_id)::bigint AS total
       FROM grouped),
     binned AS (
       SELECT pooled, segment_id, (below * greatest(1, least($2::bigint, total / $3::bigint)) / total)::int AS bin,
         sum(n)::int AS picks, sum(k)::int AS conversions,
         sum(n * p) AS "sumPredicted", min(p) AS "minPredicted", max(p) AS "maxPredicted",
         sum(-k * ln(p) - (n - k) * ln(1 - p)) AS "logLoss",
         sum(k * (1 - p) ^ 2 + (n - k) * p ^ 2) AS "squaredError"
       FROM ranked GROUP BY 1, 2, 3)
     SELECT CASE WHEN b.pooled THEN NULL ELSE coalesce(s.key, '*') END AS segment, b.bin, b.picks, b.conversions,
       b."sumPredicted", b."minPredicted", b."maxPredicted", b."logLoss", b."squaredError"
     FROM binned b LEFT JOIN segment s ON s.id = b.segment_id
     ORDER BY b.pooled, b.segment_id, b.bin`, [pageId, options.maxBins, options.perBin, options.latest]);
  return rows;
}
