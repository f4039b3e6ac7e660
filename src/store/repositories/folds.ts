/**
 * Queries of the fold loop: the per-page advisory lock, folding trials and conversions, snapshots, allocation
 * records and the retired list. All of one fold run on the same transaction client.
 */
import type { Queryable } from "./sql.ts";

/** First key of the two-int advisory lock; the second is the page id. "FW" + 1. */
const FOLD_LOCK_NAMESPACE = 0x4657_0001;

/**
 * Session-level variant, held on one connection while a fold computes outside any transaction,
 * so other processes skip the page instead of computing the same fold (PostgreSQL only: on the
 * embedded database every connection shares one session).
 */
export async function tryFoldSessionLock(q: Queryable, pageId: number): Promise<boolean> {
  const { rows } = await q.query<{ locked: boolean }>("SELECT pg_try_advisory_lock($1, $2) AS locked", [FOLD_LOCK_NAMESPACE, pageId]);
  return rows[0].locked;
}

export async function releaseFoldSessionLock(q: Queryable, pageId: number): Promise<void> {
  await q.query("SELECT pg_advisory_unlock($1, $2)", [FOLD_LOCK_NAMESPACE, pageId]);
}

/** Non-blocking: false when another process (or loop) is folding this page right now. */
export async function tryFoldLock(q: Queryable, pageId: number): Promise<boolean> {
  const { rows } = await q.query<{ locked: boolean }>("SELECT pg_try_advisory_xact_lock($1, $2) AS locked", [FOLD_LOCK_NAMESPACE, pageId]);
  return rows[0].locked;
}

/** Blocking: page edits wait for a running fold, then hold folds off until they commit. */
export async function foldLock(q: Queryable, pageId: number): Promise<void> {
  await q.query("SELECT pg_advisory_xact_lock($1, $2)", [FOLD_LOCK_NAMESPACE, pageId]);
}

export interface FoldPageRow { id: number; key: string; status: string; settings: Record<string, unknown>; modelVersion: number; lastFoldAt: Date | null }

/**
 * The page's fold bookkeeping; `lock` (inside a transaction) holds the row until commit.
 * FOR NO KEY UPDATE, not FOR UPDATE: it still excludes other writers of the row (folds, edits),
 * but not the FOR KEY SHARE that the foreign-key checks of new picks and outcomes take on it.
 * With FOR UPDATE an outcome holding its pick row waited on the page row while the fold holding
 * the page row waited on the pick: a deadlock (PostgreSQL manual §13.3.2, row-level lock modes).
 */
export async function foldPageRow(q: Queryable, pageId: number, lock: boolean): Promise<FoldPageRow | null> {
  const { rows } = await q.query<{ id: number; key: string; status: string; settings: Record<string, unknown>; model_version: number; last_fold_at: Date | null }>(
    `SELECT id, key, status, settings, model_version, last_fold_at FROM page WHERE id = $1${lock ? " FOR NO KEY UPDATE" : ""}`, [pageId]);
  const r = rows[0];
  return r ? { id: r.id, key: r.key, status: r.status, settings: r.settings, modelVersion: r.model_version, lastFoldAt: r.last_fold_at } : null;
}

/**
 * Marks a page's model as needing a fold now (after an edit): a page with no last fold is due at
 * once and folds even with nothing new (FoldLoop). The fold that follows sets the time again.
 */
export async function requireFold(q: Queryable, pageId: number): Promise<void> {
  await q.query("UPDATE page SET last_fold_at = NULL WHERE id = $1", [pageId]);
}

/** Pages whose fold interval has passed or that an edit left unfolded (by the database clock), oldest fold first. */
export async function dueForFold(q: Queryable): Promise<number[]> {
  const { rows } = await q.query<{ id: number }>(
    `SELECT id FROM page
     WHERE status <> 'paused' AND (last_fold_at IS NULL OR
       last_fold_at + make_interval(secs => coalesce((settings->>'foldIntervalSeconds')::float8, 3600)) <= now())
     ORDER BY last_fold_at NULLS FIRST`);
  return rows.map((r) => r.id);
}

export interface AggregateRow { segment: string; combination: string; n: number; k: number }

/**
 * What a fold at `cutoff` counts. A pick's trial (n = 1) folds in the first fold after it is
 * served; its conversion (k = 1) in the first fold after it is reported, once its trial is folded
 * (in this fold or earlier; never for an ignored pick). Counting outcomes only when they are known
 * keeps every fold unbiased: the log-likelihood k·η + n·log(1−σ(η)) is linear in k, so the folds
 * add up to the full-data likelihood (src/model/fold.ts). A conversion is only accepted inside the
 * attribution window (outcomes.ts) and is stamped with the database clock, so both conditions,
 * once true, stay true: rows read at one moment and marked at a later one agree unless another
 * fold or a page edit intervened.
 */
const TRIAL = "(state = 'open' AND created_at <= $2)";
const CONVERSION = `(converted_at <= $2 AND conversion_folded_version IS NULL AND (state = 'folded' OR ${TRIAL}))`;

/** The trials and conversions due by `cutoff`, aggregated by (segment, combination); reads only. */
export async function dueRows(q: Queryable, pageId: number, cutoff: Date): Promise<AggregateRow[]> {
  const { rows } = await q.query<AggregateRow>(
    `SELECT coalesce(s.key, '*') AS segment, p.combination, count(*) FILTER (WHERE p.trial)::int AS n, count(*) FILTER (WHERE p.conversion)::int AS k
     FROM (SELECT segment_id, combination, ${TRIAL} AS trial, ${CONVERSION} AS conversion
           FROM pick WHERE page_id = $1 AND (${TRIAL} OR ${CONVERSION})) p
     LEFT JOIN segment s ON s.id = p.segment_id
     GROUP BY 1, 2 ORDER BY 1, 2`,
    [pageId, cutoff]);
  return rows;
}

/**
 * Marks the trials and conversions due by `cutoff` as folded into `version` (one UPDATE, so a
 * pick's trial and its conversion can land in the same fold) and returns them aggregated like
 * dueRows. Runs inside the fold's commit transaction, so the marks and the new snapshot commit
 * together or not at all: no trial or conversion is ever folded twice.
 */
export async function markDueAndAggregate(q: Queryable, pageId: number, cutoff: Date, version: number): Promise<AggregateRow[]> {
  const { rows } = await q.query<AggregateRow>(
    `WITH due AS (
       UPDATE pick SET
         state = CASE WHEN ${TRIAL} THEN 'folded' ELSE state END,
         folded_version = CASE WHEN ${TRIAL} THEN $3 ELSE folded_version END,
         conversion_folded_version = CASE WHEN ${CONVERSION} THEN $3 ELSE conversion_folded_version END
       WHERE page_id = $1 AND (${TRIAL} OR ${CONVERSION})
       RETURNING segment_id, combination, folded_version = $3 AS trial, conversion_folded_version IS NOT DISTINCT FROM $3 AS conversion)
     SELECT coalesce(s.key, '*') AS segment, m.combination, count(*) FILTER (WHERE m.trial)::int AS n, count(*) FILTER (WHERE m.conversion)::int AS k
     FROM due m LEFT JOIN segment s ON s.id = m.segment_id
     GROUP BY 1, 2 ORDER BY 1, 2`,
    [pageId, cutoff, version]);
  return rows;
}

/**
 * The aggregated rows each past fold consumed (for audits and the rebuild-from-picks check): per
 * version, the trials folded into it and the conversions folded into it.
 */
export async function foldedRows(q: Queryable, pageId: number): Promise<(AggregateRow & { version: number })[]> {
  const { rows } = await q.query<AggregateRow & { version: number }>(
    `SELECT e.version, coalesce(s.key, '*') AS segment, e.combination, sum(e.n)::int AS n, sum(e.k)::int AS k
     FROM (SELECT folded_version AS version, segment_id, combination, 1 AS n, 0 AS k
           FROM pick WHERE page_id = $1 AND state = 'folded'
           UNION ALL
           SELECT conversion_folded_version, segment_id, combination, 0, 1
           FROM pick WHERE page_id = $1 AND conversion_folded_version IS NOT NULL) e
     LEFT JOIN segment s ON s.id = e.segment_id
     GROUP BY 1, 2, 3 ORDER BY 1, 2, 3`, [pageId]);
  return rows;
}

export async function segmentKeys(q: Queryable, pageId: number, limit: number): Promise<string[]> {
  const { rows } = await q.query<{ key: string }>("SELECT key FROM segment WHERE page_id = $1 ORDER BY id LIMIT $2", [pageId, limit]);
  return rows.map((r) => r.key);
}

export interface Snapshot { version: number; state: unknown; summary: Record<string, unknown>; createdAt: Date }

export async function loadSnapshot(q: Queryable, pageId: number, version: number): Promise<Snapshot | null> {
  const { rows } = await q.query<{ version: number; state: unknown; summary: Record<string, unknown>; created_at: Date }>(
    "SELECT version, state, summary, created_at FROM posterior_snapshot WHERE page_id = $1 AND version = $2", [pageId, version]);
  const r = rows[0];
  return r ? { version: r.version, state: r.state, summary: r.summary, createdAt: r.created_at } : null;
}

export async function insertSnapshot(q: Queryable, pageId: number, version: number, state: unknown, summary: unknown, at: Date): Promise<void> {
  await q.query("INSERT INTO posterior_snapshot (page_id, version, state, summary, created_at) VALUES ($1, $2, $3, $4, $5)",
    [pageId, version, JSON.stringify(state), JSON.stringify(summary), at]);
}

/** Keeps the newest `keep` snapshots; older ones are not needed to serve, report or resume. */
export async function pruneSnapshots(q: Queryable, pageId: number, version: number, keep: number): Promise<void> {
  await q.query("DELETE FROM posterior_snapshot WHERE page_id = $1 AND version <= $2", [pageId, version - keep]);
}

/**
 * Keeps allocation history bounded for long-running pages: every version of the last 200, every
 * 10th of the last 2000, every 100th before that (the report charts at most 200 points anyway).
 */
export async function thinAllocationHistory(q: Queryable, pageId: number, version: number): Promise<void> {
  await q.query(
    `DELETE FROM allocation_record WHERE page_id = $1 AND version IN ($2 - 200, $2 - 2000)
       AND version % CASE WHEN version = $2 - 200 THEN 10 ELSE 100 END <> 0`,
    [pageId, version]);
}

/** Records a fold pass that found nothing to fold, so the page is not due again at once. */
export async function touchFold(q: Queryable, pageId: number, at: Date): Promise<void> {
  await q.query("UPDATE page SET last_fold_at = $2 WHERE id = $1", [pageId, at]);
}

export async function insertAllocations(q: Queryable, pageId: number, version: number, allocations: Record<string, unknown>, at: Date): Promise<void> {
  const segments = Object.keys(allocations);
  if (segments.length === 0) return;
  await q.query(
    `INSERT INTO allocation_record (page_id, version, segment, allocation, created_at)
     SELECT $1, $2, s, a::jsonb, $5 FROM unnest($3::text[], $4::text[]) AS x(s, a)`,
    [pageId, version, segments, segments.map((s) => JSON.stringify(allocations[s])), at]);
}

export async function loadAllocations(q: Queryable, pageId: number, version: number): Promise<Map<string, unknown>> {
  const { rows } = await q.query<{ segment: string; allocation: unknown }>(
    "SELECT segment, allocation FROM allocation_record WHERE page_id = $1 AND version = $2", [pageId, version]);
  return new Map(rows.map((r) => [r.segment, r.allocation]));
}

export interface RetiredRow {
  segment: string; combination: string; reason: string; figures: Record<string, unknown>;
  retiredAt: Date; reinstatedAt: Date | null;
}

export async function loadRetired(q: Queryable, pageId: number): Promise<RetiredRow[]> {
  const { rows } = await q.query<{ segment: string; combination: string; reason: string; figures: Record<string, unknown>; retired_at: Date; reinstated_at: Date | null }>(
    "SELECT segment, combination, reason, figures, retired_at, reinstated_at FROM retired_combination WHERE page_id = $1 ORDER BY retired_at, id", [pageId]);
  return rows.map((r) => ({ segment: r.segment, combination: r.combination, reason: r.reason, figures: r.figures, retiredAt: r.retired_at, reinstatedAt: r.reinstated_at }));
}

/** The engine returns the full retired list (history included) each fold; store exactly that. */
export async function replaceRetired(q: Queryable, pageId: number, entries: RetiredRow[]): Promise<void> {
  await q.query("DELETE FROM retired_combination WHERE page_id = $1", [pageId]);
  if (entries.length === 0) return;
  await q.query(
    `INSERT INTO retired_combination (page_id, segment, combination, reason, figures, retired_at, reinstated_at)
     SELECT $1, s, c, r, f::jsonb, ra, rb FROM unnest($2::text[], $3::text[], $4::text[], $5::text[], $6::timestamptz[], $7::timestamptz[]) AS x(s, c, r, f, ra, rb)`,
    [pageId, entries.map((e) => e.segment), entries.map((e) => e.combination), entries.map((e) => e.reason),
      entries.map((e) => JSON.stringify(e.figures)), entries.map((e) => e.retiredAt), entries.map((e) => e.reinstatedAt)]);
}

export async function setModelVersion(q: Queryable, pageId: number, version: number, foldAt: Date | null): Promise<void> {
  if (foldAt === null) await q.query("UPDATE page SET model_version = $2, updated_at = now() WHERE id = $1", [pageId, version]);
  else await q.query("UPDATE page SET model_version = $2, last_fold_at = $3 WHERE id = $1", [pageId, version, foldAt]);
}

export async function insertFoldLog(q: Queryable, pageId: number, version: number, picks: number, millis: number, at: Date): Promise<void> {
  await q.query("INSERT INTO fold_log (page_id, version, picks, millis, created_at) VALUES ($1, $2, $3, $4, $5)", [pageId, version, picks, millis, at]);
}

export async function foldLogs(q: Queryable, pageId: number): Promise<{ version: number; picks: number; at: Date }[]> {
  const { rows } = await q.query<{ version: number; picks: number; created_at: Date }>(
    "SELECT version, picks, created_at FROM fold_log WHERE page_id = $1 ORDER BY version", [pageId]);
  return rows.map((r) => ({ version: r.version, picks: r.picks, at: r.created_at }));
}

/** The database clock (transaction start time inside a transaction): one clock for every process. */
export async function databaseNow(q: Queryable): Promise<Date> {
  const { rows } = await q.query<{ now: Date }>("SELECT now() AS now");
  return rows[0].now;
}
