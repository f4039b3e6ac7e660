/**
 * Group commit for picks and outcomes: a write is acknowledged only after the transaction holding
 * it has committed, and writes that arrive while a commit is in flight are gathered into the
 * next transaction. At low load every write commits alone with no added delay; under load many
 * share one commit (one WAL flush) instead of paying one each.
 */
import type { Pool, PoolClient } from "pg";
import { fail, FacetwiseError } from "../errors.ts";
import { asServiceError } from "./errors.ts";
import { release } from "../store/repositories/sql.ts";
import { withRetry } from "../store/retry.ts";

type Work<T> = (client: PoolClient) => Promise<T>;

interface Item {
  work: Work<unknown>;
  single: boolean;
  resolve(value: unknown): void;
  reject(error: unknown): void;
}

export interface BatcherStats { batches: number; writes: number; largest: number }

export class WriteBatcher {
  private queue: Item[] = [];
  private running: Promise<void> | null = null;
  private closed = false;
  readonly stats: BatcherStats = { batches: 0, writes: 0, largest: 0 };

  constructor(private readonly pool: Pool, private readonly maxBatch = 200) {}

  /**
   * Queues `work` for the next transaction; resolves with its result once committed. `work` must
   * use only the client it is given, and must throw only FacetwiseErrors before writing anything
   * (those fail that item alone; any other error retries the batch's items one by one).
   * `single`: the work is one SQL statement, atomic on its own, so when it is alone in a batch it
   * runs without BEGIN/COMMIT round trips (the statement's own commit makes it durable).
   */
  submit<T>(work: Work<T>, single = false): Promise<T> {
    if (this.closed) return Promise.reject(fail("DATABASE_UNAVAILABLE", { reason: "the server is shutting down" }));
    return new Promise<T>((resolve, reject) => {
      this.queue.push({ work, single, resolve: resolve as (v: unknown) => void, reject });
      if (!this.running) this.running = this.drain();
    });
  }

  /** Stops accepting writes and waits for the queued ones to commit. */
  async close(): Promise<void> {
    this.closed = true;
    await this.running;
  }

  private async drain(): Promise<void> {
    while (this.queue.length > 0) {
      const batch = this.queue.splice(0, this.maxBatch);
      await this.commit(batch, true);
    }
    this.running = null;
  }

  private async commit(batch: Item[], retryAlone: boolean): Promise<void> {
    const outcomes: { ok: boolean; value: unknown }[] = [];
    try {
      // a deadlock or serialization victim rolled back whole: run the same batch again
      await withRetry(() => this.run(batch, outcomes));
    } catch (error) {
      const mapped = asServiceError(error);
      if (retryAlone && batch.length > 1 && mapped.code !== "DATABASE_UNAVAILABLE" && mapped.code !== "DATABASE_BUSY") {
        // One bad write must not sink the others: replay each in its own transaction.
        for (const item of batch) await this.commit([item], false);
        return;
      }
      for (const item of batch) item.reject(mapped);
      return;
    }
    batch.forEach((item, i) => (outcomes[i].ok ? item.resolve(outcomes[i].value) : item.reject(outcomes[i].value)));
  }

  /** One attempt at committing `batch`; fills `outcomes` (emptied first) when it commits. */
  private async run(batch: Item[], outcomes: { ok: boolean; value: unknown }[]): Promise<void> {
    outcomes.length = 0;
    let client: PoolClient | undefined;
    let broken = false;
    try {
      client = await this.pool.connect();
      const alone = batch.length === 1 && batch[0].single;
      if (!alone) await client.query("BEGIN");
      for (const item of batch) {
        try {
          outcomes.push({ ok: true, value: await item.work(client) });
        } catch (error) {
          if (!(error instanceof FacetwiseError)) throw error;
          outcomes.push({ ok: false, value: error });
        }
      }
      if (!alone) await client.query("COMMIT");
      this.stats.batches += 1;
      this.stats.writes += batch.length;
      this.stats.largest = Math.max(this.stats.largest, batch.length);
    } catch (error) {
      if (client) {
        await client.query("ROLLBACK").catch(() => (broken = true));
        release(client, broken);
        client = undefined;
      }
      throw error;
    } finally {
      if (client) release(client, false);
    }
  }
}
