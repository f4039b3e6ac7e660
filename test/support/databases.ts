/**
 * The databases integration suites run on: always the embedded database, plus the real
 * PostgreSQL named by TEST_DATABASE_URL when that is set (.ci/run sets it).
 *
 * Writing a suite:
 *
 *   import { forEachDatabase } from "../support/databases.ts";
 *
 *   forEachDatabase("picks", (open) => {
 *     let db: Database;
 *     beforeAll(async () => { db = await open(); });   // fresh, empty, migrated
 *     afterAll(async () => { await db.close(); });      // close() also deletes it
 *     it("…", async () => { … db.prisma … });
 *   });
 *
 * This declares one `describe` per target, named "picks on embedded" / "picks on postgres".
 * Every open() gets its own storage: a new temp folder (embedded) or a new database created on
 * the TEST_DATABASE_URL server (postgres), so suites and vitest workers never share state and can
 * run in parallel. close() deletes that storage. Restart tests use `target.storage()` to open
 * the same storage several times in sequence, then `remove()` it.
 *
 * Requirements: the TEST_DATABASE_URL user may CREATE DATABASE (the postgres superuser with
 * trust auth does). Databases are named fwtest_<pid>_<n>_<random>; a killed test run can leave
 * some behind — drop them with DROP DATABASE.
 *
 * Speed: a fresh embedded cluster costs ~10 s of initdb in WebAssembly, so each process builds
 * one bare (unmigrated) template cluster under the OS temp folder, keyed by the PGlite version,
 * and copies it for every open() (~1–2 s including the migrations, which still run every time).
 */
import { cpSync, existsSync, mkdtempSync, readFileSync, renameSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { randomBytes } from "node:crypto";
import pg from "pg";
import { describe } from "vitest";
import { PGlite } from "@electric-sql/pglite";
import { openDatabase, type Database, type OpenOptions } from "../../src/store/database.ts";
import { CLUSTER_DIR } from "../../src/store/embedded.ts";

export type StorageOptions = Pick<OpenOptions, "migrate" | "migrationsDir">;

export interface TestStorage {
  /** the data folder (embedded) or the database url (postgres) */
  location: string;
  /** opens the storage (migrating it unless `migrate: false`); close the result before opening again */
  open(options?: StorageOptions): Promise<Database>;
  /** deletes the storage; every Database opened on it must be closed first */
  remove(): Promise<void>;
}

export interface DatabaseTarget {
  kind: Database["kind"];
  /** "embedded" or "postgres", used in suite names */
  label: string;
  /** a fresh, empty storage, opened once; the Database's close() also removes the storage */
  open(options?: StorageOptions): Promise<Database>;
  /** a fresh storage to open several times (restart tests) */
  storage(): Promise<TestStorage>;
}

/** The targets of this run: embedded always, postgres when TEST_DATABASE_URL is set. */
export function databaseTargets(): DatabaseTarget[] {
  const targets = [target("embedded", embeddedStorage)];
  const serverUrl = process.env.TEST_DATABASE_URL;
  if (serverUrl) targets.push(target("postgres", () => postgresStorage(serverUrl)));
  return targets;
}

/** One `describe("<name> on <label>")` per target; `body` receives that target's open(). */
export function forEachDatabase(name: string, body: (open: DatabaseTarget["open"], target: DatabaseTarget) => void): void {
  for (const t of databaseTargets()) describe(`${name} on ${t.label}`, () => body(t.open, t));
}

function target(kind: Database["kind"], storage: () => Promise<TestStorage>): DatabaseTarget {
  return {
    kind,
    label: kind,
    storage,
    async open(options) {
      const store = await storage();
      let db: Database;
      try {
        db = await store.open(options);
      } catch (error) {
        await store.remove();
        throw error;
      }
      const close = db.close;
      return { ...db, close: async () => { try { await close(); } finally { await store.remove(); } } };
    },
  };
}

async function embeddedStorage(): Promise<TestStorage> {
  const cluster = await templateCluster();
  const dataDir = mkdtempSync(join(tmpdir(), "facetwise-test-"));
  try {
    cpSync(cluster, join(dataDir, CLUSTER_DIR), { recursive: true });
  } catch (error) {
    rmSync(dataDir, { recursive: true, force: true });
    throw error;
  }
  return {
    location: dataDir,
    open: (options) => openDatabase({ ...options, dataDir }),
    remove: async () => rmSync(dataDir, { recursive: true, force: true }),
  };
}

let template: Promise<string> | undefined;

/**
 * A bare PGlite cluster to copy, shared by test processes through the OS temp folder. Built in a
 * private folder and renamed into place, so concurrent builders cannot leave a half-made one.
 */
function templateCluster(): Promise<string> {
  template ??= (async () => {
    const version = JSON.parse(readFileSync(new URL("../../node_modules/@electric-sql/pglite/package.json", import.meta.url), "utf8")).version;
    const path = join(tmpdir(), `facetwise-pglite-template-${version}`);
    if (existsSync(join(path, "PG_VERSION"))) return path;
    const building = mkdtempSync(join(tmpdir(), "facetwise-pglite-building-"));
    const db = await PGlite.create({ dataDir: join(building, "cluster") });
    await db.close();
    try {
      renameSync(join(building, "cluster"), path);
    } catch (error) {
      // another process won the race; use its template
      if (!existsSync(join(path, "PG_VERSION"))) throw error;
    } finally {
      rmSync(building, { recursive: true, force: true });
    }
    return path;
  })();
  return template;
}

let created = 0;

async function postgresStorage(serverUrl: string): Promise<TestStorage> {
  const name = `fwtest_${process.pid}_${++created}_${randomBytes(3).toString("hex")}`;
  await admin(serverUrl, `CREATE DATABASE ${name}`);
  const url = new URL(serverUrl);
  url.pathname = `/${name}`;
  return {
    location: url.toString(),
    open: (options) => openDatabase({ ...options, url: url.toString() }),
    remove: () => admin(serverUrl, `DROP DATABASE IF EXISTS ${name} WITH (FORCE)`),
  };
}

/** Runs one statement on the TEST_DATABASE_URL database with a short-lived connection. */
async function admin(serverUrl: string, sql: string): Promise<void> {
  const client = new pg.Client({ connectionString: serverUrl });
  await client.connect();
  try {
    await client.query(sql);
  } finally {
    await client.end();
  }
}
