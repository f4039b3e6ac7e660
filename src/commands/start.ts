/**
 * `facetwise start`: opens the database (embedded by default, DATABASE_URL when set), migrates,
 * creates the admin token on first start and the demo page on an empty database, serves the API
 * and the console, and shuts down cleanly on SIGINT/SIGTERM.
 */
import { parseArgs } from "node:util";
import { fail } from "../errors.ts";
import { DEFAULT_DATA_DIR, openDatabase, redact } from "../store/database.ts";
import { startServer } from "../http/server.ts";
import { checkAdminToken } from "../service/auth.ts";

export const summary = "run the server (API, fold loop, admin console); embedded database unless DATABASE_URL is set";

export const help = `Usage: facetwise start [--port N] [--host H] [--data DIR] [--no-demo] [--no-fold]

Starts the facetwise server: applies migrations, creates the admin token on first start (printed
once), seeds the demo page on an empty database, and serves the API under /api/v1 and the admin
console at /. Stops cleanly on Ctrl-C (SIGINT) or SIGTERM.

Options:
  --port N     port to listen on (default $PORT or 4600)
  --host H     address to listen on (default 127.0.0.1; 0.0.0.0 for all interfaces)
  --data DIR   data folder of the embedded database (default ${DEFAULT_DATA_DIR}); ignored with DATABASE_URL
  --no-demo    do not seed the demo page or stream its first visitors
  --no-fold    serve only; leave folding to other processes on the same PostgreSQL
  --help       show this help

Environment:
  DATABASE_URL           PostgreSQL connection string; unset = embedded database
  FACETWISE_ADMIN_TOKEN  accepted as the admin token besides the stored one (at least 32 characters)
  FACETWISE_TRUST_PROXY  behind a reverse proxy: which proxies to trust for the client address
                         (express "trust proxy", e.g. "loopback" or "10.0.0.0/8"); rate limits use it
  PORT                   default port`;

/** Demo visitors streamed once after seeding, so the console shows learning within a minute. */
const FIRST_DEMO_VISITORS = 3000;

export async function run(argv: string[]): Promise<number> {
  let values: { port?: string; host?: string; data?: string; "no-demo"?: boolean; "no-fold"?: boolean };
  try {
    ({ values } = parseArgs({
      args: argv, strict: true,
      options: { port: { type: "string" }, host: { type: "string" }, data: { type: "string" }, "no-demo": { type: "boolean" }, "no-fold": { type: "boolean" } },
    }));
  } catch (error) {
    throw fail("INVALID_OPTION", { option: "for start", reason: `${(error as Error).message}; see facetwise start --help` });
  }
  const portText = values.port ?? process.env.PORT ?? "4600";
  const port = Number(portText);
  if (!Number.isInteger(port) || port < 0 || port > 65535) throw fail("INVALID_OPTION", { option: "--port", reason: `"${portText}" is not a port number (0–65535)` });

  checkAdminToken(process.env.FACETWISE_ADMIN_TOKEN || undefined);
  const url = process.env.DATABASE_URL || undefined;
  const db = await openDatabase({ url, dataDir: values.data, migrate: true });
  let server;
  try {
    server = await startServer(db, {
      port, host: values.host ?? "127.0.0.1", foldLoop: !values["no-fold"],
      adminToken: process.env.FACETWISE_ADMIN_TOKEN || undefined,
      trustProxy: process.env.FACETWISE_TRUST_PROXY || undefined,
    });
  } catch (error) {
    await db.close();
    if ((error as { code?: string }).code === "EADDRINUSE") throw fail("INVALID_OPTION", { option: "--port", reason: `port ${port} is in use; pick another with --port` });
    throw error;
  }
  const { services } = server;
  const token = await services.auth.ensureAdminToken();
  const seeded = values["no-demo"] ? false : await services.seedDemo();

  console.log(`facetwise is running on ${db.kind === "embedded" ? `the embedded database in ${values.data ?? DEFAULT_DATA_DIR}` : redact(db.url)}`);
  console.log(`  console:  ${server.url}/`);
  console.log(`  API:      ${server.url}/api/v1`);
  if (token) {
    console.log(`  admin token (shown once, stored hashed — keep it):\n    ${token}`);
  } else {
    console.log("  admin token: the one printed at first start" + (process.env.FACETWISE_ADMIN_TOKEN ? ", or FACETWISE_ADMIN_TOKEN" : ""));
  }
  if (seeded) {
    console.log(`  demo page "${services.demoPageKey}" created; streaming ${FIRST_DEMO_VISITORS} demo visitors over the next minute`);
    await services.demo.start(services.demoPageKey, FIRST_DEMO_VISITORS, 45);
  }
  console.log("Press Ctrl-C to stop.");

  await new Promise<void>((resolve) => {
    const stop = (signal: string) => {
      console.log(`\nfacetwise: ${signal} received, finishing requests and writes…`);
      resolve();
    };
    process.once("SIGINT", () => stop("SIGINT"));
    process.once("SIGTERM", () => stop("SIGTERM"));
  });
  try {
    await server.close();
  } finally {
    await db.close();
  }
  console.log("facetwise: stopped");
  return 0;
}
