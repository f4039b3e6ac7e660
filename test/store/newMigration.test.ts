/**
 * Migrations and schema.prisma stay in step: the committed migrations build exactly the database
 * that Prisma's own `migrate diff --from-empty` script builds from schema.prisma (compared in
 * PostgreSQL's catalog: columns with types, nullability and defaults; index and constraint
 * definitions). And scripts/new-migration.ts writes a migration the migrator then applies.
 */
import { cpSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, expect, it } from "vitest";
import { forEachDatabase } from "../support/databases.ts";
import { migrationSql, migrationTimestamp, newMigration, SCHEMA } from "../../scripts/new-migration.ts";
import { MIGRATION_TABLE, MIGRATIONS_DIR } from "../../src/store/migrator.ts";
import type { Database } from "../../src/store/database.ts";

/** Everything about our tables that the schema decides, as sorted text lines. */
async function catalog(db: Database): Promise<string[]> {
  const columns = await db.pool.query(
    `SELECT table_name || '.' || column_name || ' ' || udt_name || ' null=' || is_nullable || ' default=' || coalesce(column_default, '-')
       || ' precision=' || coalesce(datetime_precision::text, '-') AS line
       FROM information_schema.columns WHERE table_schema = current_schema() AND table_name <> $1`,
    [MIGRATION_TABLE],
  );
  const indexes = await db.pool.query(
    "SELECT 'index ' || indexdef AS line FROM pg_indexes WHERE schemaname = current_schema() AND tablename <> $1",
    [MIGRATION_TABLE],
  );
  const constraints = await db.pool.query(
    `SELECT 'constraint ' || c.conrelid::regclass || ' ' || c.conname || ' ' || pg_get_constraintdef(c.oid) AS line
       FROM pg_constraint c JOIN pg_namespace n ON n.oid = c.connamespace
      WHERE n.nspname = current_schema() AND c.conrelid::regclass::text <> $1`,
    [MIGRATION_TABLE],
  );
  return [...columns.rows, ...indexes.rows, ...constraints.rows].map((r) => r.line as string).sort();
}

/** Each runs the Prisma CLI and opens several databases: allow for a busy machine. */
const SLOW = 180_000;
const scratch = mkdtempSync(join(tmpdir(), "facetwise-schema-edit-"));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

forEachDatabase("migrations and schema.prisma", (open, target) => {
  it("the committed migrations build the same tables, columns, indexes and constraints as schema.prisma", async () => {
    const migrated = await open();
    const reference = await open({ migrate: false });
    try {
      await reference.pool.query(await migrationSql(null, SCHEMA, reference.url));
      const expected = await catalog(reference);
      expect(expected.length).toBeGreaterThan(50);
      expect(await catalog(migrated)).toEqual(expected);
    } finally {
      await migrated.close();
      await reference.close();
    }
  }, SLOW);

  it("scripts/new-migration.ts writes the SQL for a schema change, and the migrator applies it", async () => {
    const edited = join(scratch, `${target.kind}.prisma`);
    const schema = readFileSync(SCHEMA, "utf8");
    expect(schema).toMatch(/^ {2}millis +Float$/m);
    writeFileSync(edited, schema.replace(/^( {2}millis +Float)$/m, "$1\n  note      String?"));
    const dir = join(scratch, `${target.kind}-migrations`);
    cpSync(MIGRATIONS_DIR, dir, { recursive: true });

    // any reachable database serves Prisma's engine; a migrated one proves nothing is written there
    const helper = await open();
    let folder: string | null;
    try {
      expect(await newMigration("unchanged", { from: SCHEMA, to: SCHEMA, dir, url: helper.url })).toBeNull();
      const now = new Date(Date.UTC(2099, 0, 2, 3, 4, 5));
      folder = await newMigration("add_fold_note", { from: SCHEMA, to: edited, dir, now, url: helper.url });
      expect((await helper.pool.query("SELECT count(*)::int AS n FROM information_schema.columns WHERE column_name = 'note'")).rows[0].n).toBe(0);
    } finally {
      await helper.close();
    }
    expect(folder).toBe(join(dir, "20990102030405_add_fold_note"));
    expect(readdirSync(dir)).toContain("20990102030405_add_fold_note");
    expect(readFileSync(join(folder!, "migration.sql"), "utf8")).toMatch(/ALTER TABLE "fold_log" ADD COLUMN\s+"note" TEXT;/);

    const db = await open({ migrationsDir: dir });
    try {
      const column = await db.pool.query(
        "SELECT is_nullable FROM information_schema.columns WHERE table_name = 'fold_log' AND column_name = 'note'",
      );
      expect(column.rows).toEqual([{ is_nullable: "YES" }]);
    } finally {
      await db.close();
    }
  }, SLOW);
});

it("names migrations by UTC time to the second", () => {
  expect(migrationTimestamp(new Date("2026-12-02T03:15:09.999Z"))).toBe("20261202031509");
});
