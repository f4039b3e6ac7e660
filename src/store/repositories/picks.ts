/** Queries for segments, picks and the sticky (page, visitor) assignment. */
import type { Queryable } from "./sql.ts";

export async function ensureSegment(q: Queryable, pageId: number, key: string, context: Record<string, string>): Promise<number> {
  const { rows } = await q.query<{ id: number }>(
    `INSERT INTO segment (page_id, key, context) VALUES ($1, $2, $3)
     ON CONFLICT (page_id, key) DO UPDATE SET key = EXCLUDED.key RETURNING id`,
    [pageId, key, JSON.stringify(context)]);
  return rows[0].id;
}

export async function segmentIds(q: Queryable, pageId: number): Promise<Map<string, number>> {
  const { rows } = await q.query<{ id: number; key: string }>("SELECT id, key FROM segment WHERE page_id = $1", [pageId]);
  return new Map(rows.map((r) => [r.key, r.id]));
}

export interface ServedPick { pick: string; combination: string; propensity: number; segment: string }

interface ServedRow { id: string; combination: string; propensity: number; segment: string | null }
const served = (r: ServedRow): ServedPick => ({ pick: r.id, combination: r.combination, propensity: r.propensity, segment: r.segment ?? "*" });

/** The visitor's current pick, if its assignment has not expired. */
export async function findLiveAssignment(q: Queryable, pageId: number, visitor: string): Promise<ServedPick | null> {
  const { rows } = await q.query<ServedRow>(
    `SELECT p.id, p.combination, p.propensity, s.key AS segment
     FROM assignment a JOIN pick p ON p.id = a.pick_id LEFT JOIN segment s ON s.id = p.segment_id
     WHERE a.page_id = $1 AND a.visitor = $2 AND a.expires_at > now()`, [pageId, visitor]);
  return rows[0] ? served(rows[0]) : null;
}

export interface NewPick {
  id: string; pageId: number; visitor: string; segmentId: number | null; combination: string; propensity: number;
  /** the predicted rate of the combination in the allocation that served it (null: none listed) */
  predictedRate: number | null;
  modelVersion: number; assignmentSeconds: number; windowSeconds: number; state: "open" | "ignored";
  /** a live assignment to replace anyway (its combination no longer exists on the page) */
  replaces: string | null;
}

/**
 * The sticky rule, in one statement: claims the (page, visitor) assignment only if there is none
 * or it expired, and only then stores the pick; otherwise returns the pick that holds the
 * assignment. Two concurrent first visits of one visitor therefore get one and the same pick.
 */
export async function claimAssignment(q: Queryable, p: NewPick): Promise<{ won: boolean; pick: ServedPick }> {
  const { rows } = await q.query<ServedRow & { won: boolean }>(
    `WITH claim AS (
       INSERT INTO assignment (page_id, visitor, pick_id, expires_at) VALUES ($1, $2, $3, now() + make_interval(secs => $4))
       ON CONFLICT (page_id, visitor) DO UPDATE SET pick_id = EXCLUDED.pick_id, expires_at = EXCLUDED.expires_at
       WHERE assignment.expires_at <= now() OR assignment.pick_id = $5::uuid
       RETURNING pick_id),
     stored AS (
       INSERT INTO pick (id, page_id, visitor, segment_id, combination, propensity, model_version, created_at, expires_at, window_ends_at, state, predicted_rate)
       SELECT pick_id, $1, $2, $6, $7, $8, $9, now(), now() + make_interval(secs => $4), now() + make_interval(secs => $10), $11, $12::float8 FROM claim
       RETURNING id, combination, propensity)
     SELECT true AS won, id, combination, propensity, NULL AS segment FROM stored
     UNION ALL
     SELECT false, p.id, p.combination, p.propensity, s.key
     FROM assignment a JOIN pick p ON p.id = a.pick_id LEFT JOIN segment s ON s.id = p.segment_id
     WHERE a.page_id = $1 AND a.visitor = $2 AND NOT EXISTS (SELECT 1 FROM claim)`,
    [p.pageId, p.visitor, p.id, p.assignmentSeconds, p.replaces, p.segmentId, p.combination, p.propensity, p.modelVersion, p.windowSeconds, p.state, p.predictedRate]);
  if (rows[0]?.won) return { won: true, pick: { pick: p.id, combination: p.combination, propensity: p.propensity, segment: "" } };
  if (rows[0]) return { won: false, pick: served(rows[0]) };
  // The winner committed after this statement's snapshot was taken: read it with a fresh one.
  const live = await q.query<ServedRow>(
    `SELECT p.id, p.combination, p.propensity, s.key AS segment
     FROM assignment a JOIN pick p ON p.id = a.pick_id LEFT JOIN segment s ON s.id = p.segment_id
     WHERE a.page_id = $1 AND a.visitor = $2`, [p.pageId, p.visitor]);
  return { won: false, pick: served(live.rows[0]) };
}

/** Open picks whose combination the page no longer serves are set aside (never folded). */
export async function openCombinations(q: Queryable, pageId: number): Promise<string[]> {
  const { rows } = await q.query<{ combination: string }>(
    "SELECT DISTINCT combination FROM pick WHERE page_id = $1 AND state = 'open'", [pageId]);
  return rows.map((r) => r.combination);
}

export async function ignoreOpenPicks(q: Queryable, pageId: number, combinations: string[]): Promise<number> {
  if (combinations.length === 0) return 0;
  const { rowCount } = await q.query(
    "UPDATE pick SET state = 'ignored' WHERE page_id = $1 AND state = 'open' AND combination = ANY($2)", [pageId, combinations]);
  return rowCount ?? 0;
}
