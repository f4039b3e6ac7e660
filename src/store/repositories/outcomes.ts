/** Queries for outcomes: idempotent by (page, event), and the pick's conversion inside its window. */
import type { Queryable } from "./sql.ts";

export type OutcomeResult =
  | { kind: "unknown-pick" }
  | { kind: "duplicate" }
  | { kind: "counted" }
  | { kind: "late"; windowEndsAt: Date }
  | { kind: "already-converted" };

/**
 * Stores one outcome and, if it is the pick's first conversion inside the attribution window,
 * marks the pick converted. Writes nothing for an unknown pick. The window is judged by the
 * database clock, the same clock the fold loop uses to mature picks.
 */
export async function recordOutcome(
  q: Queryable, o: { pageId: number; pick: string; event: string; value: number | null },
): Promise<OutcomeResult> {
  const inserted = await q.query(
    `INSERT INTO outcome (page_id, pick_id, event, value, created_at)
     SELECT $1, $2::uuid, $3, $4, now() WHERE EXISTS (SELECT 1 FROM pick WHERE id = $2::uuid AND page_id = $1)
     ON CONFLICT (page_id, event) DO NOTHING RETURNING id`,
    [o.pageId, o.pick, o.event, o.value]);
  if (inserted.rowCount === 0) {
    const { rowCount } = await q.query("SELECT 1 FROM pick WHERE id = $1::uuid AND page_id = $2", [o.pick, o.pageId]);
    return rowCount === 0 ? { kind: "unknown-pick" } : { kind: "duplicate" };
  }
  const converted = await q.query(
    `UPDATE pick SET converted_at = now()
     WHERE id = $1::uuid AND converted_at IS NULL AND state IN ('open', 'ignored') AND window_ends_at >= now() RETURNING id`,
    [o.pick]);
  if (converted.rowCount === 1) return { kind: "counted" };
  const { rows } = await q.query<{ converted_at: Date | null; window_ends_at: Date }>(
    "SELECT converted_at, window_ends_at FROM pick WHERE id = $1::uuid", [o.pick]);
  return rows[0].converted_at !== null ? { kind: "already-converted" } : { kind: "late", windowEndsAt: rows[0].window_ends_at };
}
