/**
 * The migrator: applies prisma/migrations/<timestamp>_<name>/migration.sql in name order and
 * records each applied file with its SHA-256 in the table `facetwise_migration`.
 *
 * Why our own and not Prisma Migrate: through the pg driver adapter Prisma Migrate fails on
 * PostgreSQL's `name` type, and its schema engine would otherwise be a native download.
 *
 * Guarantees:
 * - All pending migrations run in ONE transaction: either every one applies or none does.
 * - The transaction first takes a transaction-scoped advisory lock, so concurrent `migrate` calls
 *   (several server processes starting together) run one after another; the later ones find
 *   nothing pending. (On the embedded database, which is a single session, the lock is re-entrant
 *   but its socket server already runs one transaction at a time.)
 * - An applied file whose checksum changed is refused (MIGRATION_CHANGED), and so is a database
 *   holding a migration this build does not have (MIGRATION_UNKNOWN): the schema would not be the
 *   one the generated client expects. Line endings are normalised before hashing so a Windows
 *   checkout does not count as an edit.
 * - Statements that cannot run inside a transaction (CREATE INDEX CONCURRENTLY, …) are not allowed.
 */
import { createHash } from "node:crypto";
import { existsSync, readdirSync, readFileSync, statSync } from "node:fs";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import type pg from "pg";
import { fail, FacetwiseError } from "../errors.ts";

export const MIGRATIONS_DIR = fileURLToPath(new URL("../../prisma/migrations/", import.meta.url));
export const MIGRATION_TABLE = "facetwise_migration";
/**
 * Advisory lock key for migrations, in the single-bigint keyspace (an arbitrary constant, easy to
 * spot in pg_locks). Other facetwise locks use the two-int4 keyspace, which PostgreSQL keeps apart.
 */
export const MIGRATION_LOCK_KEY = "7306470101";

export interface Migration {
  /** folder name, e.g. 20261202030000_initial */
  name: string;
  sql: string;
  /** hex SHA-256 of the SQL with CRLF normalised to LF */
  checksum: string;
}

export interface AppliedMigration {
  name: string;
  checksum: string;
  appliedAt: Date;
}

export interface MigrationStatus {
  applied: AppliedMigration[];
  /** names of migrations on disk not yet applied, in order */
  pending: string[];
  /** refusals (edited or unknown migrations); empty when the database is consistent with the files */
  problems: FacetwiseError[];
}

const NAME_PATTERN = /^\d{14}_[a-z0-9_]+$/;

/** Reads the migrations folder: one sub-folder per migration holding migration.sql, in name order. */
export function loadMigrations(dir: string = MIGRATIONS_DIR): Migration[] {
  if (!existsSync(dir)) throw fail("INVALID_MIGRATIONS", { folder: dir, reason: "it does not exist" });
  const names = readdirSync(dir)
    .filter((entry) => statSync(join(dir, entry)).isDirectory())
    .sort();
  return names.map((name) => {
    if (!NAME_PATTERN.test(name)) {
      throw fail("INVALID_MIGRATIONS", { folder: dir, reason: `"${name}" is not named <14-digit timestamp>_<lowercase_name>` });
    }
    const file = join(dir, name, "migration.sql");
    if (!existsSync(file)) throw fail("INVALID_MIGRATIONS", { folder: dir, reason: `"${name}" has no migration.sql` });
    const sql = readFileSync(file, "utf8");
    return { name, sql, checksum: checksumOf(sql) };
  });
}

export function checksumOf(sql: string): string {
  return createHash("sha256").update(sql.replace(/\r\n/g, "\n")).digest("hex");
}

/**
 * Applies every pending migration (see the guarantees above). Returns the names applied now;
 * throws MIGRATION_CHANGED / MIGRATION_UNKNOWN / MIGRATION_FAILED / INVALID_MIGRATIONS with
 * nothing applied.
 */
export async function migrate(pool: pg.Pool, dir: string = MIGRATIONS_DIR): Promise<string[]> {
  const migrations = loadMigrations(dir);
  const client = await pool.connect();
  try {
    await client.query("BEGIN");
    try {
      await client.query("SELECT pg_advisory_xact_lock($1)", [MIGRATION_LOCK_KEY]);
      // Created under the lock: concurrent CREATE TABLE IF NOT EXISTS can still collide otherwise.
      await client.query(
        `CREATE TABLE IF NOT EXISTS ${MIGRATION_TABLE} (
           name text PRIMARY KEY,
           checksum text NOT NULL,
           applied_at timestamptz NOT NULL DEFAULT now())`,
      );
      const status = compare(migrations, await readApplied(client));
      if (status.problems.length > 0) throw status.problems[0];
      const pending = migrations.filter((m) => status.pending.includes(m.name));
      for (const migration of pending) {
        try {
          await client.query(migration.sql);
        } catch (error) {
          throw fail("MIGRATION_FAILED", { migration: migration.name, reason: (error as Error).message });
        }
        await client.query(`INSERT INTO ${MIGRATION_TABLE} (name, checksum) VALUES ($1, $2)`, [
          migration.name,
          migration.checksum,
        ]);
      }
      await client.query("COMMIT");
      return pending.map((m) => m.name);
    } catch (error) {
      await client.query("ROLLBACK");
      throw error;
    }
  } finally {
    client.release();
  }
}

/** What is applied, what is pending and what is wrong, without changing anything. */
export async function migrationStatus(pool: pg.Pool, dir: string = MIGRATIONS_DIR): Promise<MigrationStatus> {
  const migrations = loadMigrations(dir);
  const exists = await pool.query<{ found: boolean }>("SELECT to_regclass($1) IS NOT NULL AS found", [MIGRATION_TABLE]);
  return compare(migrations, exists.rows[0].found ? await readApplied(pool) : []);
}

export interface Readiness {
  ready: boolean;
  /** one line for humans and the /readyz body */
  detail: string;
  pending: string[];
}

/**
 * For /readyz: the database answers and every migration on disk is applied unchanged.
 * Never throws; an unreachable database is `ready: false` with the driver's reason.
 */
export async function readiness(pool: pg.Pool, dir: string = MIGRATIONS_DIR): Promise<Readiness> {
  try {
    const status = await migrationStatus(pool, dir);
    if (status.problems.length > 0) return { ready: false, detail: status.problems[0].message, pending: status.pending };
    if (status.pending.length > 0) {
      return { ready: false, detail: `migrations not applied: ${status.pending.join(", ")}; run facetwise migrate`, pending: status.pending };
    }
    return { ready: true, detail: `database reachable, ${status.applied.length} migrations applied`, pending: [] };
  } catch (error) {
    return { ready: false, detail: `database unreachable: ${(error as Error).message}`, pending: [] };
  }
}

async function readApplied(queryable: pg.Pool | pg.PoolClient): Promise<AppliedMigration[]> {
  const result = await queryable.query<{ name: string; checksum: string; applied_at: Date }>(
    `SELECT name, checksum, applied_at FROM ${MIGRATION_TABLE} ORDER BY name`,
  );
  return result.rows.map((row) => ({ name: row.name, checksum: row.checksum, appliedAt: row.applied_at }));
}

function compare(migrations: Migration[], applied: AppliedMigration[]): MigrationStatus {
  const onDisk = new Map(migrations.map((m) => [m.name, m]));
  const problems: FacetwiseError[] = [];
  for (const row of applied) {
    const file = onDisk.get(row.name);
    if (!file) {
      problems.push(fail("MIGRATION_UNKNOWN", { migration: row.name }));
    } else if (file.checksum !== row.checksum) {
      problems.push(
        fail("MIGRATION_CHANGED", { migration: row.name, applied: row.checksum.slice(0, 12), current: file.checksum.slice(0, 12) }),
      );
    }
  }
  const done = new Set(applied.map((row) => row.name));
  return { applied, pending: migrations.filter((m) => !done.has(m.name)).map((m) => m.name), problems };
}
