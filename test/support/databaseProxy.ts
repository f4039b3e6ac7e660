/**
 * A TCP / Unix-socket proxy that stands between facetwise's pool and a database, so a test can
 * "stop the database" without touching the real server (the machine's PostgreSQL is shared):
 * stop() destroys every open connection and stops listening — new connections are then refused
 * as by a stopped server (ECONNREFUSED on a TCP port; on a Unix socket the file is gone, ENOENT,
 * as PostgreSQL removes its socket file when it stops) — and start() listens again.
 *
 *   const proxy = await startProxy({ host: "127.0.0.1", port: 5432 }, { host: "127.0.0.1", port: 0 });
 *   openDatabase({ url: `postgresql://postgres@127.0.0.1:${proxy.port}/db` });
 *   await proxy.stop();  …  await proxy.start();  …  await proxy.stop();
 *
 * `throughProxy(target)` opens a fresh test storage with its pool behind such a proxy.
 */
import { connect, createServer, type Server, type Socket } from "node:net";
import { renameSync } from "node:fs";
import { join } from "node:path";
import { openDatabase, type Database } from "../../src/store/database.ts";
import type { DatabaseTarget } from "./databases.ts";

export type Address = { host: string; port: number } | { path: string };

export interface DatabaseProxy {
  /** the TCP port listened on (0 for a Unix socket) */
  port: number;
  /** connections cut by stop() so far */
  cut: number;
  /** destroys every open connection and stops listening (also how to close the proxy for good) */
  stop(): Promise<void>;
  /** listens again on the same address */
  start(): Promise<void>;
}

export async function startProxy(upstream: Address, listen: Address): Promise<DatabaseProxy> {
  /** each open connection: the client's socket and ours to the database */
  const open = new Set<[Socket, Socket]>();
  let server: Server | null = null;
  const proxy: DatabaseProxy = {
    port: "port" in listen ? listen.port : 0,
    cut: 0,
    async start() {
      if (server) return;
      const s = createServer((client) => {
        const db = connect(upstream);
        const pair: [Socket, Socket] = [client, db];
        open.add(pair);
        // either side failing or closing takes the other down, as a cut connection would
        const drop = () => {
          client.destroy();
          db.destroy();
          open.delete(pair);
        };
        for (const socket of [client, db]) socket.on("error", drop).on("close", drop);
        client.pipe(db).pipe(client);
      });
      await new Promise<void>((resolve, reject) => {
        s.once("error", reject);
        if ("path" in listen) s.listen(listen.path, resolve);
        else s.listen(proxy.port, listen.host, resolve);
      });
      server = s;
      // the port chosen the first time (port 0) is kept for every start()
      if (!("path" in listen)) proxy.port = (s.address() as { port: number }).port;
    },
    async stop() {
      const s = server;
      server = null;
      if (!s) return;
      const closed = new Promise<void>((resolve) => s.close(() => resolve()));
      proxy.cut += open.size;
      for (const pair of open) pair.forEach((socket) => socket.destroy());
      open.clear();
      await closed;
    },
  };
  await proxy.start();
  return proxy;
}

/**
 * A fresh storage of `target` opened with its pool connecting through a proxy. PostgreSQL: the
 * pool's url names the proxy's port, which forwards to TEST_DATABASE_URL's host and port.
 * Embedded: the database listens on a Unix socket whose path is fixed by its url, so the real
 * socket is renamed (a listening Unix socket keeps working under a new name) and the proxy takes
 * its place; the one connection the pool opened directly is then discarded.
 */
export async function throughProxy(target: DatabaseTarget): Promise<{ db: Database; proxy: DatabaseProxy; close(): Promise<void> }> {
  const storage = await target.storage();
  let proxy: DatabaseProxy | undefined;
  let db: Database | undefined;
  try {
    if (target.kind === "postgres") {
      const url = new URL(storage.location);
      proxy = await startProxy({ host: url.hostname, port: Number(url.port || 5432) }, { host: "127.0.0.1", port: 0 });
      url.hostname = "127.0.0.1";
      url.port = String(proxy.port);
      db = await openDatabase({ url: url.toString() });
    } else {
      db = await storage.open();
      const socketPath = join(new URL(db.url).searchParams.get("host")!, ".s.PGSQL.5432");
      const realPath = `${socketPath}.real`;
      renameSync(socketPath, realPath);
      proxy = await startProxy({ path: realPath }, { path: socketPath });
      const direct = await db.pool.connect();
      direct.release(true);
    }
  } catch (error) {
    await proxy?.stop();
    await db?.close();
    await storage.remove();
    throw error;
  }
  const [opened, p] = [db, proxy];
  return {
    db: opened,
    proxy: p,
    async close() {
      try {
        await p.stop();
        await opened.close();
      } finally {
        await storage.remove();
      }
    },
  };
}
