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
