/**
 * The one database handle the repositories take: anything with pg's `query` (a Pool, or a
 * PoolClient inside a transaction). Repositories never open a second connection themselves,
 * because on the embedded database a query on another connection waits for an open transaction
 * to end — awaiting one from inside a transaction would deadlock.
 */
import type { Pool, PoolClient, QueryResultRow } from "pg";

export interface Queryable {
  query<R extends QueryResultRow = QueryResultRow>(text: string, values?: unknown[]): Promise<{ rows: R[]; rowCount: number | null }>;
}

/** Runs `work` in one transaction on one pooled connection; rolls back on any error. */
export async function inTransaction<T>(pool: Pool, work: (client: PoolClient) => Promise<T>): Promise<T> {
  const client = await pool.connect();
  let broken = false;
  try {
    await client.query("BEGIN");
    const result = await work(client);
    await client.query("COMMIT");
    return result;
  } catch (error) {
    await client.query("ROLLBACK").catch(() => {
      broken = true;
    });
    throw error;
  } finally {
    release(client, broken);
  }
}

/** Returns a connection to the pool; a broken one (its ROLLBACK failed) is discarded. */
export function release(client: PoolClient, broken: boolean): void {
  client.release(broken || undefined);
}
