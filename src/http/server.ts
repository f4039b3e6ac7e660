/**
 * Runs the app on a port: starts services over an open database, listens, and on close stops
 * accepting, lets in-flight requests finish, drains queued writes and stops the loops.
 */
import { createServer, type Server } from "node:http";
import type { AddressInfo } from "node:net";
import { fileURLToPath } from "node:url";
import type { Database } from "../store/database.ts";
import { createServices, type ServiceOptions, type Services } from "../service/index.ts";
import { createApp, type AppOptions } from "./app.ts";

export const DEFAULT_WEB_DIR = fileURLToPath(new URL("../../web/dist/", import.meta.url));

export interface ServerOptions extends ServiceOptions, AppOptions {
  port?: number;
  host?: string;
}

export interface RunningServer {
  url: string;
  port: number;
  services: Services;
  server: Server;
  close(): Promise<void>;
}

export async function startServer(db: Database, options: ServerOptions = {}): Promise<RunningServer> {
  const services = await createServices(db, options);
  const app = createApp(services, { webDir: options.webDir === undefined ? DEFAULT_WEB_DIR : options.webDir, ...pick(options) });
  const server = createServer(app);
  server.keepAliveTimeout = 65_000;
  await new Promise<void>((resolve, reject) => {
    server.once("error", reject);
    server.listen(options.port ?? 0, options.host ?? "127.0.0.1", () => resolve());
  }).catch(async (error: unknown) => {
    await services.close();
    throw error;
  });
  const port = (server.address() as AddressInfo).port;
  const host = options.host && options.host !== "0.0.0.0" && options.host !== "::" ? options.host : "127.0.0.1";
  let closing: Promise<void> | null = null;
  return {
    url: `http://${host.includes(":") ? `[${host}]` : host}:${port}`,
    port, services, server,
    close() {
      closing ??= (async () => {
        const done = new Promise<void>((resolve) => server.close(() => resolve()));
        server.closeIdleConnections();
        const force = setTimeout(() => server.closeAllConnections(), 5000);
        await done;
        clearTimeout(force);
        await services.close();
      })();
      return closing;
    },
  };
}

function pick(options: AppOptions): AppOptions {
  const out: AppOptions = {};
  if (options.adminBodyLimit) out.adminBodyLimit = options.adminBodyLimit;
  if (options.publicBodyLimit) out.publicBodyLimit = options.publicBodyLimit;
  if (options.rateLimits !== undefined) out.rateLimits = options.rateLimits;
  if (options.trustProxy) out.trustProxy = options.trustProxy;
  return out;
}
