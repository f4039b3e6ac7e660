/**
 * Opens facetwise's database: a real PostgreSQL when given a url, otherwise the embedded one
 * (src/store/embedded.ts) persisted in a data folder. Either way the caller gets a Prisma client
 * on the pg driver adapter, the pg pool under it (for raw SQL, advisory locks, LISTEN), and a
 * close() that releases everything. Migrations are applied on open unless `migrate: false`.
 *
 * The url is never read from the environment here: commands pass `process.env.DATABASE_URL`
 * explicitly, so tests cannot stumble onto a developer's database.
 */
import pg from "pg";
import { PrismaPg } from "@prisma/adapter-pg";
import { PrismaClient } from "./generated/client.ts";
import { fail, FacetwiseError } from "../errors.ts";
import { startEmbedded, type EmbeddedServer } from "./embedded.ts";
import { migrate as applyMigrations, MIGRATIONS_DIR } from "./migrator.ts";

export interface Database {
  prisma: PrismaClient;
  pool: pg.Pool;
  kind: "embedded" | "postgres";
  /** the url the pool connects to (for the embedded database, its local socket) */
  url: string;
  /** disconnects Prisma, ends the pool, and stops the embedded database (flushing it) */
  close(): Promise<void>;
}

export interface OpenOptions {
  /** PostgreSQL connection string; absent or empty = embedded database */
  url?: string;
  /** data folder of the embedded database; default `.facetwise-data` in the working directory */
  dataDir?: string;
  /** apply pending migrations on open (default true) */
  migrate?: boolean;
  /** migrations folder (tests use copies); default prisma/migrations */
  migrationsDir?: string;
}

export const DEFAULT_DATA_DIR = ".facetwise-data";

/** Pool settings per kind; see embedded.ts for why the embedded database gets one connection. */
const POOL: Record<Database["kind"], pg.PoolConfig> = {
  postgres: { max: 10, connectionTimeoutMillis: 10_000, idleTimeoutMillis: 30_000 },
  // One connection kept open for good (no idle reconnects). A caller that awaits the pool while
  // holding its only connection gets a timeout error after 15 s instead of hanging forever.
  embedded: { max: 1, connectionTimeoutMillis: 15_000, idleTimeoutMillis: 0 },
};

/**
 * Prisma's interactive transactions wait at most `maxWait` for a connection (default 2 s). With
 * one embedded connection, a transaction may queue behind others under load, so wait longer.
 */
const TRANSACTIONS: Record<Database["kind"], { maxWait: number; timeout: number }> = {
  postgres: { maxWait: 5_000, timeout: 10_000 },
  embedded: { maxWait: 15_000, timeout: 15_000 },
};

export async function openDatabase(options: OpenOptions = {}): Promise<Database> {
  const { url, dataDir = DEFAULT_DATA_DIR, migrate = true, migrationsDir = MIGRATIONS_DIR } = options;
  const kind: Database["kind"] = url ? "postgres" : "embedded";
  const embedded: EmbeddedServer | undefined = url ? undefined : await startEmbedded(dataDir);
  const target = url ?? embedded!.url;
  const pool = new pg.Pool({ connectionString: target, ...POOL[kind] });
  // An idle connection dropped by the server (restart, failover) must not crash the process;
  // the pool discards it and the next query reconnects or fails with DATABASE_UNAVAILABLE.
  pool.on("error", (error) => console.warn(`facetwise: database connection lost: ${error.message}`));
  // A connection has no "error" listener while it is handed from the pool to a caller, and pg
  // emits a server's FATAL (a terminated backend) synchronously if it arrives in the same read as
  // the reply that freed the connection: with nobody listening that event crashes the process.
  // So every connection keeps a listener for life; the failing query still reports the error to
  // its caller, and the pool discards a connection that is no longer queryable when it comes back.
  pool.on("connect", (client) => client.on("error", ignoreConnectionError));
  const prisma = new PrismaClient({ adapter: new PrismaPg(pool), transactionOptions: TRANSACTIONS[kind] });

  let closed = false;
  const close = async () => {
    if (closed) return;
    closed = true;
    try {
      await prisma.$disconnect();
      await pool.end();
    } finally {
      await embedded?.stop();
    }
  };

  try {
    await checkReachable(pool, target);
    if (migrate) await applyMigrations(pool, migrationsDir);
  } catch (error) {
    await close();
    throw error;
  }
  return { prisma, pool, kind, url: target, close };
}

async function checkReachable(pool: pg.Pool, url: string): Promise<void> {
  try {
    await pool.query("SELECT 1");
  } catch (error) {
    throw unavailable(error, url);
  }
}

/** Node socket codes and SQLSTATE classes (08 connection, 28 auth, 3D no database, 53 resources, 57P shutdown). */
const CONNECTION_CODES = new Set(["ECONNREFUSED", "ECONNRESET", "ENOTFOUND", "EAI_AGAIN", "ETIMEDOUT", "EHOSTUNREACH", "EPIPE"]);
const CONNECTION_SQLSTATE_CLASSES = ["08", "28", "3D", "53", "57P"];
/** Prisma's codes for the same (P1000 auth … P1017 closed; P2024 no pool connection in time). */
const PRISMA_CONNECTION_CODES = new Set(["P1000", "P1001", "P1002", "P1003", "P1008", "P1017", "P2024"]);
/** What @prisma/adapter-pg reports in meta.driverAdapterError.cause.kind. */
const ADAPTER_CONNECTION_KINDS = new Set([
  "DatabaseNotReachable", "ConnectionClosed", "SocketTimeout", "TooManyConnections",
  "DatabaseDoesNotExist", "DatabaseAccessDenied", "AuthenticationFailed", "TlsConnectionError",
]);

/**
 * True when `error` means the database cannot be reached (not "this query is wrong"): from pg,
 * or from Prisma over the pg adapter. The HTTP layer answers these with 503 and Retry-After.
 */
export function isConnectionError(error: unknown): boolean {
  const seen = new Set<unknown>();
  const visit = (e: unknown): boolean => {
    if (!e || typeof e !== "object" || seen.has(e)) return false;
    seen.add(e);
    const { code, syscall, kind, message, cause, meta } = e as { code?: unknown; syscall?: unknown; kind?: unknown; message?: unknown; cause?: unknown; meta?: { driverAdapterError?: unknown } };
    if (typeof code === "string") {
      if (CONNECTION_CODES.has(code) || PRISMA_CONNECTION_CODES.has(code)) return true;
      // A server on a Unix socket that has stopped removed its socket file (PostgreSQL does;
      // so does the embedded database's socket): connect(2) then fails ENOENT, not ECONNREFUSED.
      if (code === "ENOENT" && syscall === "connect") return true;
      if (/^[0-9A-Z]{5}$/.test(code) && CONNECTION_SQLSTATE_CLASSES.some((c) => code.startsWith(c))) return true;
    }
    if (typeof kind === "string" && ADAPTER_CONNECTION_KINDS.has(kind)) return true;
    if (typeof message === "string" && /Connection terminated|timeout exceeded when trying to connect/i.test(message)) return true;
    return visit(cause) || visit(meta?.driverAdapterError);
  };
  return visit(error);
}

/** DATABASE_UNAVAILABLE naming the target (password hidden) and the driver's reason. */
export function unavailable(error: unknown, url: string): FacetwiseError {
  if (error instanceof FacetwiseError) return error;
  const reason = (error as Error)?.message || (error as { code?: string })?.code || String(error);
  return fail("DATABASE_UNAVAILABLE", {
    reason: `cannot connect to ${redact(url)}: ${reason}; check DATABASE_URL, or unset it to use the embedded database`,
  });
}

/** The url with any password replaced by ***. */
export function redact(url: string): string {
  try {
    const parsed = new URL(url);
    if (parsed.password) parsed.password = "***";
    return parsed.toString();
  } catch {
    return "the configured database";
  }
}

function ignoreConnectionError(): void {
  // reported by the query that fails on the connection, or by the pool's "error" event
}
