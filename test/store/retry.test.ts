/**
 * The retry helper: SQLSTATE 40P01 (deadlock_detected) and 40001 (serialization_failure) are the
 * codes PostgreSQL's manual (Appendix A, and §13.2 "applications … should be prepared to retry")
 * names for "run the transaction again"; anything else is thrown at once. A real deadlock on
 * PostgreSQL is produced when TEST_DATABASE_URL is set.
 */
import { describe, expect, it } from "vitest";
import pg from "pg";
import { isRetryable, withRetry } from "../../src/store/retry.ts";
import { asServiceError } from "../../src/service/errors.ts";

const sqlError = (code: string) => Object.assign(new Error(`sqlstate ${code}`), { code });

describe("withRetry", () => {
  it("runs again after a deadlock or serialization failure, then returns the result", async () => {
    const thrown = [sqlError("40P01"), sqlError("40001")];
    let runs = 0;
    const result = await withRetry(async () => {
      runs += 1;
      const next = thrown.shift();
      if (next) throw next;
      return "done";
    }, { baseMs: 1 });
    expect(result).toBe("done");
    expect(runs).toBe(3);
  });

  it("throws any other error at once, and the last one when attempts run out", async () => {
    let runs = 0;
    await expect(withRetry(async () => {
      runs += 1;
      throw sqlError("23505");
    })).rejects.toThrow("23505");
    expect(runs).toBe(1);
    runs = 0;
    await expect(withRetry(async () => {
      runs += 1;
      throw sqlError("40P01");
    }, { attempts: 3, baseMs: 1 })).rejects.toThrow("40P01");
    expect(runs).toBe(3);
  });

  it("recognises a wrapped cause and maps what is left to 503 DATABASE_BUSY", () => {
    expect(isRetryable(new Error("outer", { cause: sqlError("40001") }))).toBe(true);
    expect(isRetryable(sqlError("23503"))).toBe(false);
    const mapped = asServiceError(sqlError("40P01"));
    expect(mapped.code).toBe("DATABASE_BUSY");
    expect(mapped.status).toBe(503);
  });
});

describe.skipIf(!process.env.TEST_DATABASE_URL)("a real deadlock on PostgreSQL", () => {
  it("is retried until it commits", async () => {
    const pool = new pg.Pool({ connectionString: process.env.TEST_DATABASE_URL, max: 2 });
    try {
      await pool.query("DROP TABLE IF EXISTS fw_retry_probe; CREATE TABLE fw_retry_probe (id int PRIMARY KEY, n int); INSERT INTO fw_retry_probe VALUES (1, 0), (2, 0)");
      // two transactions lock rows 1,2 and 2,1: PostgreSQL aborts one with 40P01
      const crossing = (first: number, second: number) => withRetry(async () => {
        const c = await pool.connect();
        try {
          await c.query("BEGIN");
          await c.query("UPDATE fw_retry_probe SET n = n + 1 WHERE id = $1", [first]);
          await new Promise((r) => setTimeout(r, 200));
          await c.query("UPDATE fw_retry_probe SET n = n + 1 WHERE id = $1", [second]);
          await c.query("COMMIT");
        } catch (error) {
          await c.query("ROLLBACK");
          throw error;
        } finally {
          c.release();
        }
      }, { baseMs: 50 });
      await Promise.all([crossing(1, 2), crossing(2, 1)]);
      const { rows } = await pool.query("SELECT n FROM fw_retry_probe ORDER BY id");
      expect(rows.map((r) => r.n)).toEqual([2, 2]);
    } finally {
      await pool.query("DROP TABLE IF EXISTS fw_retry_probe").catch(() => undefined);
      await pool.end();
    }
  });
});
