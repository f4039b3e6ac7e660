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
  const client = await checkout(pool);
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

/**
 * A pooled connection for a transaction. A connection that dies while checked out emits "error"
 * besides failing its query; without a listener that event would crash the process.
 */
export async function checkout(pool: Pool): Promise<PoolClient> {
  const client = await pool.connect();
  client.on("error", ignore);
  return client;
}

/** Returns a connection to the pool; a broken one is discarded and keeps its listener while it dies. */
export function release(client: PoolClient, broken: boolean): void {
  if (!broken) client.off("error", ignore);
  client.release(broken || undefined);
}

function ignore(): void {
  // the failing query reports the error to its caller
}
