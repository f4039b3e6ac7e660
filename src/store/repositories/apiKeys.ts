/** Queries for API keys, stored as SHA-256 hashes (the plaintext is shown once and never stored). */
import type { Queryable } from "./sql.ts";

export async function hasAdminKey(q: Queryable): Promise<boolean> {
  const { rowCount } = await q.query("SELECT 1 FROM api_key WHERE scope = 'admin' LIMIT 1");
  return (rowCount ?? 0) > 0;
}

export async function insertApiKey(q: Queryable, key: { scope: "admin" | "page"; pageId: number | null; hash: string; prefix: string }): Promise<void> {
  await q.query("INSERT INTO api_key (page_id, scope, hash, prefix) VALUES ($1, $2, $3, $4)", [key.pageId, key.scope, key.hash, key.prefix]);
}

export async function findApiKey(q: Queryable, hash: string): Promise<{ scope: string; pageId: number | null } | null> {
  const { rows } = await q.query<{ scope: string; page_id: number | null }>("SELECT scope, page_id FROM api_key WHERE hash = $1", [hash]);
  return rows[0] ? { scope: rows[0].scope, pageId: rows[0].page_id } : null;
}
