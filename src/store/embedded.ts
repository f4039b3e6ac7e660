/**
 * The embedded database: PGlite (PostgreSQL compiled to WebAssembly) persisted in a data folder
 * and served to the ordinary `pg` driver over a Unix socket by pglite-socket, so the rest of
 * facetwise talks to it exactly as to a real PostgreSQL server.
 *
 * Access: PGlite accepts any user name without a password (there is no authentication in it), so
 * whoever can connect is a superuser. It therefore never listens on a TCP port: the socket lives
 * in a folder only the owner may enter (mode 0700, the socket itself 0600) — inside the data
 * folder as `run/.s.PGSQL.5432`, or, when that path is longer than a Unix socket address allows
 * (107 bytes on Linux, unix(7)), in a fresh private folder from mkdtemp under the OS temp folder.
 * Other local users cannot connect (connect(2) needs write permission on the socket and search
 * permission on its folders); only processes of the same OS user can, who could read the data
 * folder anyway.
 *
 * What callers must know (measured with PGlite 0.5.14 / pglite-socket 0.2.17):
 * - PGlite is ONE PostgreSQL session. pglite-socket multiplexes every client connection onto it,
 *   so session state is shared: an advisory lock taken on one connection is "held" by all of them
 *   (pg_try_advisory_lock succeeds on a second connection), and while a transaction is open the
 *   socket server runs only that connection's queries — others wait until it ends.
 * - Hence src/store/database.ts gives the embedded database a pool of ONE connection: queries
 *   queue in pg.Pool in plain sight instead of inside the socket server, and no code can believe
 *   it has a second, independent session. Never await another query on the shared pool from
 *   inside a transaction: with one connection that waits forever (the pool's connection timeout
 *   turns it into an error).
 * - One process only: a lock file in the data folder refuses a second process (two PGlite
 *   instances on one folder would corrupt it). Several server processes need a real PostgreSQL.
 */
import { chmodSync, closeSync, mkdirSync, mkdtempSync, openSync, readFileSync, rmSync, writeSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { PGlite } from "@electric-sql/pglite";
import { PGLiteSocketServer } from "@electric-sql/pglite-socket";
import { fail } from "../errors.ts";

export interface EmbeddedServer {
  /** connection string for the pg driver: postgresql://postgres@localhost/postgres?host=<socket folder> */
  url: string;
  /** the Unix socket the database is served on */
  socketPath: string;
  /** absolute path of the data folder */
  dataDir: string;
  /** stops the socket server, then closes PGlite (which checkpoints and flushes), then unlocks */
  stop(): Promise<void>;
}

const LOCK_FILE = "facetwise.lock";
/** PGlite keeps its cluster in a subfolder so the lock file and future files sit beside it. */
export const CLUSTER_DIR = "pgdata";
/**
 * The socket server refuses connections above this. The pool uses one; the spare slots absorb a
 * reconnect that arrives before the server has noticed the previous socket closing.
 */
const SOCKET_CONNECTIONS = 4;

/** The socket file name the pg driver derives from a socket folder and port 5432. */
const SOCKET_NAME = ".s.PGSQL.5432";
/** sun_path holds 108 bytes on Linux, including the terminating NUL (unix(7)). */
const MAX_SOCKET_PATH = 107;

/** Starts PGlite on `dataDir` (created owner-only if missing) and serves it on an owner-only Unix socket. */
export async function startEmbedded(dataDir: string): Promise<EmbeddedServer> {
  const folder = resolve(dataDir);
  mkdirSync(folder, { recursive: true, mode: 0o700 });
  const unlock = lockFolder(folder);
  let db: PGlite | undefined;
  let socketDir: { path: string; remove(): void } | undefined;
  try {
    db = await PGlite.create({ dataDir: join(folder, CLUSTER_DIR) });
    socketDir = privateSocketFolder(folder);
    const socketPath = join(socketDir.path, SOCKET_NAME);
    // left by a process killed with SIGKILL; we hold the folder's lock, so it is nobody's
    rmSync(socketPath, { force: true });
    const server = new PGLiteSocketServer({ db, path: socketPath, maxConnections: SOCKET_CONNECTIONS });
    await server.start();
    chmodSync(socketPath, 0o600);
    const pglite = db;
    const dir = socketDir;
    return {
      url: `postgresql://postgres@localhost/postgres?host=${encodeURIComponent(dir.path)}`,
      socketPath,
      dataDir: folder,
      async stop() {
        try {
          await server.stop();
          await pglite.close();
        } finally {
          dir.remove();
          unlock();
        }
      },
    };
  } catch (error) {
    await db?.close().catch(() => undefined);
    socketDir?.remove();
    unlock();
    throw error;
  }
}

/**
 * An owner-only folder for the socket: `<data folder>/run`, or a fresh mkdtemp folder when that
 * socket path would be too long for a Unix socket address. remove() deletes the socket (and the
 * temp folder).
 */
function privateSocketFolder(folder: string): { path: string; remove(): void } {
  const inside = join(folder, "run");
  if (Buffer.byteLength(join(inside, SOCKET_NAME)) <= MAX_SOCKET_PATH) {
    mkdirSync(inside, { recursive: true, mode: 0o700 });
    chmodSync(inside, 0o700);
    return { path: inside, remove: () => rmSync(join(inside, SOCKET_NAME), { force: true }) };
  }
  const temp = mkdtempSync(join(tmpdir(), "facetwise-db-")); // created 0700
  return { path: temp, remove: () => rmSync(temp, { recursive: true, force: true }) };
}

/**
 * Takes the folder's lock file (created exclusively, holding our pid). A lock left by a process
 * that no longer exists is taken over; a live one is refused with DATA_FOLDER_IN_USE.
 * Returns the function that releases it.
 */
function lockFolder(folder: string): () => void {
  const path = join(folder, LOCK_FILE);
  for (let attempt = 0; attempt < 2; attempt++) {
    try {
      const fd = openSync(path, "wx");
      writeSync(fd, String(process.pid));
      closeSync(fd);
      return () => rmSync(path, { force: true });
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code !== "EEXIST") throw error;
      const owner = Number.parseInt(readFileSync(path, "utf8"), 10);
      if (Number.isInteger(owner) && owner > 0 && isAlive(owner)) {
        throw fail("DATA_FOLDER_IN_USE", { folder, pid: owner });
      }
      rmSync(path, { force: true });
    }
  }
  throw fail("DATA_FOLDER_IN_USE", { folder, pid: "unknown" });
}

function isAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    // EPERM: the process exists but belongs to someone else
    return (error as NodeJS.ErrnoException).code === "EPERM";
  }
}
