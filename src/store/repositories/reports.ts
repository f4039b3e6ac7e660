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
 * Equal-count bins of the picks that can be scored — attribution window closed, prediction stored,
 * not set aside — per segment and pooled (segment null), with the totals calibration.ts needs.
 * The pick of rank r among n (by predicted rate, then id) goes to bin ⌊r·B/n⌋ with
 * B = max(1, min(maxBins, ⌊n/perBin⌋)) (the rule of src/model/calibration.ts). A conversion
 * counts when it was reported inside the window (converted_at is only set then).
 */
export async function calibrationBins(q: Queryable, pageId: number, maxBins: number, perBin: number): Promise<CalibrationBinRow[]> {
  const { rows } = await q.query<CalibrationBinRow>(
    `WITH scored AS (
       SELECT p.id, coalesce(s.key, '*') AS segment, p.predicted_rate AS p, (p.converted_at IS NOT NULL) AS y
       FROM pick p LEFT JOIN segment s ON s.id = p.segment_id
       WHERE p.page_id = $1 AND p.predicted_rate IS NOT NULL AND p.state <> 'ignored' AND p.window_ends_at < now()),
     grouped AS (
       SELECT g.segment, scored.p, scored.y,
         row_number() OVER w - 1 AS rank, count(*) OVER (PARTITION BY g.segment) AS n
       FROM scored CROSS JOIN LATERAL (VALUES (scored.segment), (NULL)) AS g(segment)
       WINDOW w AS (PARTITION BY g.segment ORDER BY scored.p, scored.id))
     SELECT segment, ((rank * greatest(1, least($2::bigint, n / $3::bigint))) / n)::int AS bin,
       count(*)::int AS picks, (count(*) FILTER (WHERE y))::int AS conversions,
       sum(p) AS "sumPredicted", min(p) AS "minPredicted", max(p) AS "maxPredicted",
       sum(CASE WHEN y THEN -ln(p) ELSE -ln(1 - p) END) AS "logLoss",
       sum(CASE WHEN y THEN (1 - p) ^ 2 ELSE p ^ 2 END) AS "squaredError"
     FROM grouped GROUP BY 1, 2 ORDER BY 1, 2`, [pageId, maxBins, perBin]);
  return rows;
}
