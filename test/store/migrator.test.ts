/**
 * The migrator on every database target: applies once, is idempotent, refuses edited or unknown
 * migrations, applies nothing when a migration fails, and is safe when called concurrently.
 * References outside the project: PostgreSQL's own sha256() for the recorded checksums, its
 * catalog (to_regclass, pg_locks) for what exists and who waits.
 */
import { afterEach, expect, it } from "vitest";
import { appendFileSync, cpSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import pg from "pg";
import { forEachDatabase } from "../support/databases.ts";
import { loadMigrations, migrate, migrationStatus, MIGRATION_LOCK_KEY, MIGRATIONS_DIR, readiness } from "../../src/store/migrator.ts";
import type { Database } from "../../src/store/database.ts";

const INITIAL = "20261202030000_initial";
const folders: string[] = [];

/** A private copy of the real migrations folder that a test may edit. */
function copyOfMigrations(): string {
  const dir = mkdtempSync(join(tmpdir(), "facetwise-migrations-"));
  cpSync(MIGRATIONS_DIR, dir, { recursive: true });
  folders.push(dir);
  return dir;
}

function addMigration(dir: string, name: string, sql: string): void {
  mkdirSync(join(dir, name));
  writeFileSync(join(dir, name, "migration.sql"), sql);
}

async function tableExists(db: Database, table: string): Promise<boolean> {
  const result = await db.pool.query("SELECT to_regclass($1) IS NOT NULL AS found", [table]);
  return result.rows[0].found;
}

afterEach(() => {
  for (const dir of folders.splice(0)) rmSync(dir, { recursive: true, force: true });
});

forEachDatabase("migrator", (open, target) => {
  it("applies every migration once, records PostgreSQL's sha256 of each file, then has nothing to do", async () => {
    const db = await open({ migrate: false });
    try {
      expect(await tableExists(db, "page")).toBe(false);
      expect((await migrationStatus(db.pool)).pending).toEqual(loadMigrations().map((m) => m.name));

      expect(await migrate(db.pool)).toContain(INITIAL);
      expect(await tableExists(db, "page")).toBe(true);
      expect(await migrate(db.pool)).toEqual([]);

      const rows = await db.pool.query("SELECT name, checksum FROM facetwise_migration ORDER BY name");
      expect(rows.rows.map((r) => r.name)).toEqual(loadMigrations().map((m) => m.name));
      for (const row of rows.rows) {
        const sql = readFileSync(join(MIGRATIONS_DIR, row.name, "migration.sql"), "utf8");
        // the database's own SHA-256 (PostgreSQL ≥ 11) as the reference for ours
        const reference = await db.pool.query("SELECT encode(sha256(convert_to($1, 'UTF8')), 'hex') AS hex", [sql]);
        expect(row.checksum).toBe(reference.rows[0].hex);
      }
      const status = await migrationStatus(db.pool);
      expect(status.pending).toEqual([]);
      expect(status.problems).toEqual([]);
    } finally {
      await db.close();
    }
  });

  it("refuses a migration edited after it was applied, and readiness reports it", async () => {
    const dir = copyOfMigrations();
    const db = await open({ migrationsDir: dir });
    try {
      appendFileSync(join(dir, INITIAL, "migration.sql"), "\n-- an innocent-looking edit\n");
      await expect(migrate(db.pool, dir)).rejects.toMatchObject({ code: "MIGRATION_CHANGED" });
      await expect(migrate(db.pool, dir)).rejects.toThrow(/20261202030000_initial.*edited after it was applied/);
      const ready = await readiness(db.pool, dir);
      expect(ready.ready).toBe(false);
      expect(ready.detail).toMatch(/edited after it was applied/);
    } finally {
      await db.close();
    }
  });

  it("does not count CRLF line endings (a Windows checkout) as an edit", async () => {
    const dir = copyOfMigrations();
    const db = await open({ migrationsDir: dir });
    try {
      const file = join(dir, INITIAL, "migration.sql");
      writeFileSync(file, readFileSync(file, "utf8").replace(/\n/g, "\r\n"));
      expect(await migrate(db.pool, dir)).toEqual([]);
    } finally {
      await db.close();
    }
  });

  it("refuses a database that has a migration this build lacks", async () => {
    const dir = copyOfMigrations();
    addMigration(dir, "29991231235959_from_the_future", "CREATE TABLE future_thing (id int);");
    const db = await open({ migrationsDir: dir });
    try {
      await expect(migrate(db.pool)).rejects.toMatchObject({ code: "MIGRATION_UNKNOWN" });
      expect((await readiness(db.pool)).ready).toBe(false);
    } finally {
      await db.close();
    }
  });

  it("applies nothing when one pending migration fails, and names it", async () => {
    const dir = copyOfMigrations();
    addMigration(dir, "20990101000000_broken", "CREATE TABLE half_done (id int);\nSELECT * FROM no_such_table;");
    const db = await open({ migrate: false });
    try {
      await expect(migrate(db.pool, dir)).rejects.toMatchObject({ code: "MIGRATION_FAILED" });
      await expect(migrate(db.pool, dir)).rejects.toThrow(/"20990101000000_broken" failed: .*no_such_table/);
      // one transaction: neither the good initial migration nor the first half of the bad one stayed
      expect(await tableExists(db, "page")).toBe(false);
      expect(await tableExists(db, "half_done")).toBe(false);
      expect((await migrationStatus(db.pool, dir)).applied).toEqual([]);
    } finally {
      await db.close();
    }
  });

  it("rejects a migrations folder with a badly named entry or a missing migration.sql", async () => {
    const badName = copyOfMigrations();
    mkdirSync(join(badName, "add-things"));
    expect(() => loadMigrations(badName)).toThrow(/"add-things" is not named/);
    const noFile = copyOfMigrations();
    mkdirSync(join(noFile, "20990101000000_empty"));
    expect(() => loadMigrations(noFile)).toThrow(/"20990101000000_empty" has no migration.sql/);
    expect(() => loadMigrations(join(noFile, "missing"))).toThrow(/does not exist/);
  });

  it("is safe when several connections migrate at once: exactly one applies, none fails", async () => {
    const db = await open({ migrate: false });
    // separate pools = separate connections (and, on PostgreSQL, separate sessions)
    const pools = Array.from({ length: 3 }, () => new pg.Pool({ connectionString: db.url, max: 1 }));
    try {
      const results = await Promise.all([migrate(db.pool), ...pools.map((pool) => migrate(pool))]);
      const applied = results.filter((names) => names.length > 0);
      expect(applied).toHaveLength(1);
      expect(applied[0]).toEqual(loadMigrations().map((m) => m.name));
      const rows = await db.pool.query("SELECT count(*)::int AS n FROM facetwise_migration");
      expect(rows.rows[0].n).toBe(loadMigrations().length);
    } finally {
      await Promise.all(pools.map((pool) => pool.end()));
      await db.close();
    }
  });

  it.runIf(target.kind === "postgres")("waits for the migration advisory lock held by another session", async () => {
    const db = await open({ migrate: false });
    const holder = new pg.Client({ connectionString: db.url });
    await holder.connect();
    try {
      await holder.query("SELECT pg_advisory_lock($1)", [MIGRATION_LOCK_KEY]);
      let finished = false;
      const running = migrate(db.pool).finally(() => (finished = true));
      // wait (up to ~10 s) until PostgreSQL shows the migrator queued behind the lock
      let waiting = 0;
      for (let poll = 0; waiting === 0 && !finished && poll < 1000; poll++) {
        await new Promise((resolve) => setTimeout(resolve, 10));
        const locks = await holder.query(
          "SELECT count(*)::int AS n FROM pg_locks WHERE locktype = 'advisory' AND NOT granted AND database = (SELECT oid FROM pg_database WHERE datname = current_database())",
        );
        waiting = locks.rows[0].n;
      }
      expect(waiting).toBe(1);
      expect(finished).toBe(false);
      expect(await tableExists(db, "page")).toBe(false);
      await holder.query("SELECT pg_advisory_unlock($1)", [MIGRATION_LOCK_KEY]);
      expect(await running).toEqual(loadMigrations().map((m) => m.name));
    } finally {
      await holder.end();
      await db.close();
    }
  });

  it("readiness: not ready before migrating, ready after, not ready when the database is gone", async () => {
    const db = await open({ migrate: false });
    try {
      const before = await readiness(db.pool);
      expect(before).toMatchObject({ ready: false, pending: loadMigrations().map((m) => m.name) });
      expect(before.detail).toMatch(/run facetwise migrate/);
      await migrate(db.pool);
      expect(await readiness(db.pool)).toMatchObject({ ready: true, pending: [] });
    } finally {
      await db.close();
    }
    const gone = new pg.Pool({ connectionString: db.url, connectionTimeoutMillis: 2_000 });
    try {
      const after = await readiness(gone);
      expect(after.ready).toBe(false);
      expect(after.detail).toMatch(/database unreachable/);
    } finally {
      await gone.end();
    }
  });
});
