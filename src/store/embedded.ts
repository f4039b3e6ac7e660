/**
 * The embedded database: PGlite (PostgreSQL compiled to WebAssembly) persisted in a data folder
 * and served to the ordinary `pg` driver over a local TCP socket by pglite-socket, so the rest of
 * facetwise talks to it exactly as to a real PostgreSQL server.
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
import { mkdirSync, openSync, readFileSync, rmSync, writeSync, closeSync } from "node:fs";
import { join, resolve } from "node:path";
import { PGlite } from "@electric-sql/pglite";
import { PGLiteSocketServer } from "@electric-sql/pglite-socket";
import { fail } from "../errors.ts";

export interface EmbeddedServer {
  /** connection string for the pg driver, e.g. postgresql://postgres@127.0.0.1:54012/postgres */
  url: string;
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

/** Starts PGlite on `dataDir` (created if missing) and serves it on 127.0.0.1 at a free port. */
export async function startEmbedded(dataDir: string): Promise<EmbeddedServer> {
  const folder = resolve(dataDir);
  mkdirSync(folder, { recursive: true });
  const unlock = lockFolder(folder);
  let db: PGlite | undefined;
  try {
    db = await PGlite.create({ dataDir: join(folder, CLUSTER_DIR) });
    const server = new PGLiteSocketServer({ db, host: "127.0.0.1", port: 0, maxConnections: SOCKET_CONNECTIONS });
    await server.start();
    const pglite = db;
    return {
      url: `postgresql://postgres@${server.getServerConn()}/postgres`,
      dataDir: folder,
      async stop() {
        try {
          await server.stop();
          await pglite.close();
        } finally {
          unlock();
        }
      },
    };
  } catch (error) {
    await db?.close().catch(() => undefined);
    unlock();
    throw error;
  }
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
