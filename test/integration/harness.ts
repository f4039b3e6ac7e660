/**
 * Integration harness: a real facetwise server (services + express) on an ephemeral loopback
 * port over a test database, called with node's fetch. The fold loop is off unless asked for:
 * tests fold explicitly, so nothing depends on timing.
 */
import { afterAll, beforeAll } from "vitest";
import type { Database } from "../../src/store/database.ts";
import { startServer, type RunningServer } from "../../src/http/server.ts";
import type { ServerOptions } from "../../src/http/server.ts";

export const ADMIN_TOKEN = "fw_admin_test-token-for-integration-suites";

export interface Reply<T = any> { status: number; body: T; headers: Headers; text: string }

export interface Harness {
  server: RunningServer;
  db: Database;
  url: string;
  call<T = any>(method: string, path: string, options?: { body?: unknown; raw?: string; headers?: Record<string, string> }): Promise<Reply<T>>;
  admin<T = any>(method: string, path: string, body?: unknown): Promise<Reply<T>>;
  pick(page: { key: string; publicKey: string }, visitor: string, context?: Record<string, string>): Promise<Reply>;
  outcome(page: { key: string; publicKey: string }, body: Record<string, unknown>): Promise<Reply>;
  count(table: string): Promise<number>;
  close(): Promise<void>;
}

export async function startHarness(db: Database, options: ServerOptions = {}): Promise<Harness> {
  // rate limits off unless a suite asks for them: suites send thousands of requests from one address
  const server = await startServer(db, { foldLoop: false, adminToken: ADMIN_TOKEN, webDir: null, pollMs: 200, rateLimits: false, ...options });
  const call: Harness["call"] = async (method, path, options = {}) => {
    const headers: Record<string, string> = { ...options.headers };
    let payload: string | undefined = options.raw;
    if (options.body !== undefined) {
      payload = JSON.stringify(options.body);
      headers["content-type"] ??= "application/json";
    }
    const res = await fetch(server.url + path, { method, headers, body: payload });
    const text = await res.text();
    let body: unknown = text;
    try {
      body = JSON.parse(text);
    } catch {
      // not JSON (CSV, HTML): keep the text
    }
    return { status: res.status, body: body as any, headers: res.headers, text };
  };
  return {
    server, db, url: server.url, call,
    admin: (method, path, body) => call(method, `/api/v1${path}`, { body, headers: { authorization: `Bearer ${ADMIN_TOKEN}` } }),
    pick: (page, visitor, context) => call("POST", `/api/v1/pages/${page.key}/picks`, { body: { visitor, ...(context ? { context } : {}) }, headers: { "x-page-key": page.publicKey } }),
    outcome: (page, body) => call("POST", `/api/v1/pages/${page.key}/outcomes`, { body, headers: { "x-page-key": page.publicKey } }),
    count: async (table) => (await db.pool.query<{ n: number }>(`SELECT count(*)::int AS n FROM ${table}`)).rows[0].n,
    close: () => server.close(),
  };
}

/**
 * A harness for the enclosing suite: started (on the database `open` gives) before its tests,
 * closed after them — server first, then database. The returned object forwards to the started
 * harness, so it is only used inside hooks and tests.
 */
export function useHarness(open: () => Promise<Database>, options?: ServerOptions): Harness {
  let started: Harness | undefined;
  beforeAll(async () => {
    started = await startHarness(await open(), options);
  });
  afterAll(async () => {
    await started?.close();
    await started?.db.close();
  });
  return new Proxy({} as Harness, {
    get: (_, key) => {
      if (!started) throw new Error("the harness is used before its suite started it");
      return started[key as keyof Harness];
    },
  });
}

/** A small page of our own for the suites: 2×3×2 = 12 combinations, one rule excludes 2. */
export function testPage(key: string, extra: Record<string, unknown> = {}) {
  return {
    key,
    name: `Test page ${key}`,
    factors: [
      { name: "title", levels: [{ name: "short", value: "Fast repairs" }, { name: "long", value: "Fast, honest repairs, \"guaranteed\"" }] },
      { name: "photo", levels: [{ name: "shop", value: "/a.jpg" }, { name: "tools", value: "/b.jpg" }, { name: "rider", value: "/c.jpg" }] },
      { name: "button", levels: [{ name: "book", value: "Book, now" }, { name: "call", value: "Call us" }] },
    ],
    exclude: [{ photo: "rider", button: "call" }],
    segmentBy: ["source"],
    ...extra,
  };
}
