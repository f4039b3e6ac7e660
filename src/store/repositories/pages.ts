/** Queries for pages and their definitions (factors, levels with values, exclusion rules). */
import type { Queryable } from "./sql.ts";

export interface StoredLevel { name: string; value: string }
export interface StoredFactor { name: string; levels: StoredLevel[] }
export type StoredExclusion = Record<string, string>;

export interface StoredPage {
  id: number;
  key: string;
  name: string;
  publicKey: string;
  status: "active" | "paused" | "frozen";
  segmentBy: string[];
  interactions: [string, string][] | null;
  settings: Record<string, unknown>;
  baseline: string;
  modelVersion: number;
  lastFoldAt: Date | null;
  createdAt: Date;
  updatedAt: Date;
  factors: StoredFactor[];
  exclude: StoredExclusion[];
}

export type NewPage = Omit<StoredPage, "id" | "modelVersion" | "lastFoldAt" | "createdAt" | "updatedAt">;

const pageColumns = `id, key, name, public_key, status, segment_by, interactions, settings, baseline,
  model_version, last_fold_at, created_at, updated_at`;

interface PageRowDb {
  id: number; key: string; name: string; public_key: string; status: string; segment_by: string[];
  interactions: [string, string][] | null; settings: Record<string, unknown>; baseline: string;
  model_version: number; last_fold_at: Date | null; created_at: Date; updated_at: Date;
}

export async function insertPage(q: Queryable, page: NewPage): Promise<number> {
  const { rows } = await q.query<{ id: number }>(
    `INSERT INTO page (key, name, public_key, status, segment_by, interactions, settings, baseline, updated_at)
     VALUES ($1, $2, $3, $4, $5, $6, $7, $8, now()) RETURNING id`,
    [page.key, page.name, page.publicKey, page.status, page.segmentBy,
      page.interactions === null ? null : JSON.stringify(page.interactions), JSON.stringify(page.settings), page.baseline],
  );
  const id = rows[0].id;
  await insertDefinition(q, id, page.factors, page.exclude);
  return id;
}

/** Writes factors, levels and exclusion rules of a page that has none (after create or clearDefinition). */
async function insertDefinition(q: Queryable, pageId: number, factors: StoredFactor[], exclude: StoredExclusion[]): Promise<void> {
  for (const [position, factor] of factors.entries()) {
    const { rows } = await q.query<{ id: number }>(
      "INSERT INTO factor (page_id, name, position) VALUES ($1, $2, $3) RETURNING id", [pageId, factor.name, position]);
    await q.query(
      `INSERT INTO level (factor_id, name, value, position)
       SELECT $1, l.name, l.value, l.position - 1 FROM unnest($2::text[], $3::text[]) WITH ORDINALITY AS l(name, value, position)`,
      [rows[0].id, factor.levels.map((l) => l.name), factor.levels.map((l) => l.value)],
    );
  }
  for (const rule of exclude) {
    await q.query("INSERT INTO exclusion_rule (page_id, rule) VALUES ($1, $2)", [pageId, JSON.stringify(rule)]);
  }
}

/** Replaces a page's whole definition (used by PATCH when factors or levels change). */
export async function replaceDefinition(q: Queryable, pageId: number, factors: StoredFactor[], exclude: StoredExclusion[]): Promise<void> {
  await q.query("DELETE FROM factor WHERE page_id = $1", [pageId]);
  await q.query("DELETE FROM exclusion_rule WHERE page_id = $1", [pageId]);
  await insertDefinition(q, pageId, factors, exclude);
}

export async function updateLevelValue(q: Queryable, pageId: number, factor: string, level: string, value: string): Promise<void> {
  await q.query(
    `UPDATE level SET value = $4 FROM factor
     WHERE level.factor_id = factor.id AND factor.page_id = $1 AND factor.name = $2 AND level.name = $3`,
    [pageId, factor, level, value]);
}

export async function updatePageFields(
  q: Queryable, pageId: number,
  fields: Partial<Pick<StoredPage, "name" | "status" | "settings" | "baseline" | "interactions">>,
): Promise<void> {
  const sets: string[] = [];
  const values: unknown[] = [pageId];
  const add = (column: string, value: unknown) => {
    values.push(value);
    sets.push(`${column} = $${values.length}`);
  };
  if (fields.name !== undefined) add("name", fields.name);
  if (fields.status !== undefined) add("status", fields.status);
  if (fields.settings !== undefined) add("settings", JSON.stringify(fields.settings));
  if (fields.baseline !== undefined) add("baseline", fields.baseline);
  if (fields.interactions !== undefined) add("interactions", fields.interactions === null ? null : JSON.stringify(fields.interactions));
  await q.query(`UPDATE page SET ${[...sets, "updated_at = now()"].join(", ")} WHERE id = $1`, values);
}

export async function loadPage(q: Queryable, key: string): Promise<StoredPage | null> {
  const pages = await loadPages(q, "WHERE key = $1", [key]);
  return pages[0] ?? null;
}

export async function loadPageById(q: Queryable, id: number): Promise<StoredPage | null> {
  const pages = await loadPages(q, "WHERE id = $1", [id]);
  return pages[0] ?? null;
}

export async function listPages(q: Queryable): Promise<StoredPage[]> {
  return loadPages(q, "", []);
}

async function loadPages(q: Queryable, where: string, values: unknown[]): Promise<StoredPage[]> {
  const { rows } = await q.query<PageRowDb>(`SELECT ${pageColumns} FROM page ${where} ORDER BY created_at, id`, values);
  if (rows.length === 0) return [];
  const ids = rows.map((r) => r.id);
  const levels = await q.query<{ page_id: number; factor: string; level: string | null; value: string | null }>(
    `SELECT f.page_id, f.name AS factor, l.name AS level, l.value FROM factor f LEFT JOIN level l ON l.factor_id = f.id
     WHERE f.page_id = ANY($1) ORDER BY f.page_id, f.position, l.position`, [ids]);
  const rules = await q.query<{ page_id: number; rule: StoredExclusion }>(
    "SELECT page_id, rule FROM exclusion_rule WHERE page_id = ANY($1) ORDER BY id", [ids]);
  return rows.map((r) => {
    const factors: StoredFactor[] = [];
    for (const l of levels.rows) {
      if (l.page_id !== r.id) continue;
      let factor = factors[factors.length - 1];
      if (!factor || factor.name !== l.factor) factors.push((factor = { name: l.factor, levels: [] }));
      if (l.level !== null) factor.levels.push({ name: l.level, value: l.value ?? "" });
    }
    return {
      id: r.id, key: r.key, name: r.name, publicKey: r.public_key, status: r.status as StoredPage["status"],
      segmentBy: r.segment_by, interactions: r.interactions, settings: r.settings, baseline: r.baseline,
      modelVersion: r.model_version, lastFoldAt: r.last_fold_at, createdAt: r.created_at, updatedAt: r.updated_at,
      factors, exclude: rules.rows.filter((x) => x.page_id === r.id).map((x) => x.rule),
    };
  });
}

/** What serving processes poll to notice folds and edits made elsewhere. */
export async function pageVersions(q: Queryable, keys: string[]): Promise<Map<string, { version: number; updatedAt: number }>> {
  const { rows } = await q.query<{ key: string; model_version: number; updated_at: Date }>(
    "SELECT key, model_version, updated_at FROM page WHERE key = ANY($1)", [keys]);
  return new Map(rows.map((r) => [r.key, { version: r.model_version, updatedAt: r.updated_at.getTime() }]));
}

export async function countPages(q: Queryable): Promise<number> {
  const { rows } = await q.query<{ n: number }>("SELECT count(*)::int AS n FROM page");
  return rows[0].n;
}

/** `settled`: segments (not the pooled "*") whose summary in the latest snapshot says settled. */
export interface PageTotals { visitors: number; conversions: number; segments: number; settled: number }

export async function pageTotals(q: Queryable, pageIds: number[]): Promise<Map<number, PageTotals>> {
  const { rows } = await q.query<{ page_id: number; visitors: number; conversions: number; segments: number; settled: number }>(
    `SELECT p.id AS page_id,
       (SELECT count(*)::int FROM pick WHERE page_id = p.id) AS visitors,
       (SELECT count(converted_at)::int FROM pick WHERE page_id = p.id) AS conversions,
       (SELECT count(*)::int FROM segment WHERE page_id = p.id) AS segments,
       (SELECT count(*)::int FROM posterior_snapshot s, jsonb_each(s.summary) AS e(segment, summary)
         WHERE s.page_id = p.id AND s.version = p.model_version AND e.segment <> '*' AND e.summary->>'status' = 'settled') AS settled
     FROM page p WHERE p.id = ANY($1)`, [pageIds]);
  return new Map(rows.map((r) => [r.page_id, { visitors: r.visitors, conversions: r.conversions, segments: r.segments, settled: r.settled }]));
}
