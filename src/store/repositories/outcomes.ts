/** Queries for outcomes: idempotent by (page, event), and the pick's conversion inside its window. */
import type { Queryable } from "./sql.ts";

export type OutcomeResult =
  | { kind: "unknown-pick" }
  | { kind: "duplicate" }
  | { kind: "event-reused"; pick: string }
  | { kind: "counted" }
  | { kind: "late"; windowEndsAt: Date }
  | { kind: "already-converted" };

/**
 * Stores one outcome and, if it is the pick's first conversion inside the attribution window,
 * marks the pick converted — in one statement, whether or not the pick's trial is already folded
 * (the fold counts the conversion on its own, once: repositories/folds.ts). Writes nothing for an
 * unknown pick. The window is judged by the database clock, the same clock the fold loop uses.
 */
export async function recordOutcome(
  q: Queryable, o: { pageId: number; pick: string; event: string; value: number | null },
): Promise<OutcomeResult> {
  const { rows } = await q.query<{ found: boolean; inserted: boolean; converted: boolean; converted_at: Date | null; window_ends_at: Date | null; event_pick: string | null }>(
    `WITH target AS (SELECT id, converted_at, window_ends_at FROM pick WHERE id = $2::uuid AND page_id = $1),
     inserted AS (
       INSERT INTO outcome (page_id, pick_id, event, value, created_at)
       SELECT $1, id, $3, $4, now() FROM target
       ON CONFLICT (page_id, event) DO NOTHING RETURNING id),
     converted AS (
       UPDATE pick SET converted_at = now()
       WHERE id = $2::uuid AND EXISTS (SELECT 1 FROM inserted)
         AND converted_at IS NULL AND window_ends_at >= now()
       RETURNING id)
     SELECT EXISTS (SELECT 1 FROM target) AS found, EXISTS (SELECT 1 FROM inserted) AS inserted,
            EXISTS (SELECT 1 FROM converted) AS converted,
            (SELECT converted_at FROM target) AS converted_at, (SELECT window_ends_at FROM target) AS window_ends_at,
            (SELECT pick_id::text FROM outcome WHERE page_id = $1 AND event = $3) AS event_pick`,
    [o.pageId, o.pick, o.event, o.value]);
  const r = rows[0];
  if (!r.found) return { kind: "unknown-pick" };
  // not inserted: the event id is taken — by this pick (a retry) or by another pick (a client bug)
  if (!r.inserted) return r.event_pick !== null && r.event_pick !== o.pick.toLowerCase() ? { kind: "event-reused", pick: r.event_pick } : { kind: "duplicate" };
  if (r.converted) return { kind: "counted" };
  return r.converted_at !== null ? { kind: "already-converted" } : { kind: "late", windowEndsAt: r.window_ends_at! };
}
