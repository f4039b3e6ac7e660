/**
 * The Node helper for server-rendered pages (client/node.mjs) against a real facetwise server
 * (the integration harness), a server that never answers, and a proxy that answers 503 once.
 * Cookie syntax per RFC 6265 (section 4.1.1; the "SID=31d4d96e407aad42; lang=en-US" header is the
 * RFC's own example, quoted from memory).
 */
import { createServer, request as httpRequest, type Server } from "node:http";
import type { AddressInfo } from "node:net";
import { afterAll, beforeAll, expect, it } from "vitest";
// @ts-expect-error: plain ESM without type declarations
import { createFacetwise, visitorCookie, visitorFromCookie } from "../../client/node.mjs";
import { forEachDatabase } from "../support/databases.ts";
import { useHarness, testPage } from "../integration/harness.ts";

const listen = async (server: Server) => {
  await new Promise<void>((resolve) => server.listen(0, "127.0.0.1", resolve));
  return `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
};

/** A response stand-in with node's header API (getHeader/setHeader). */
const fakeResponse = () => {
  const headers = new Map<string, unknown>();
  return { getHeader: (n: string) => headers.get(n.toLowerCase()), setHeader: (n: string, v: unknown) => headers.set(n.toLowerCase(), v) };
};

it("reads and writes the visitor cookie (RFC 6265)", () => {
  expect(visitorFromCookie("SID=31d4d96e407aad42; lang=en-US", "SID")).toBe("31d4d96e407aad42");
  expect(visitorFromCookie("lang=en-US", "SID")).toBeNull();
  expect(visitorFromCookie("fw_visitor=<script>")).toBeNull();
  expect(visitorCookie("abc-123-def", { secure: false })).toBe("fw_visitor=abc-123-def; Path=/; Max-Age=31536000; SameSite=Lax; HttpOnly");
  expect(visitorCookie("abc-123-def")).toMatch(/; Secure$/);
});

forEachDatabase("Node helper", (open) => {
  const h = useHarness(open);
  let page: { key: string; publicKey: string };
  const servers: Server[] = [];
  const baseline = { title: { level: "short", value: "Fast repairs" } };

  beforeAll(async () => {
    page = (await h.admin("POST", "/pages", testPage("node-helper"))).body;
  });
  afterAll(async () => {
    for (const s of servers) s.close();
  });

  it("picks for a new visitor, sets the cookie, and stays sticky for the returning one", async () => {
    const fw = createFacetwise({ server: h.url, page: page.key, key: page.publicKey, timeout: 5000, baseline, secure: false });
    const res = fakeResponse();
    const first = await fw.pickFor({ headers: {} }, res, { context: { source: " Search " } });
    expect(first.fallback).toBe(false);
    expect(first.segment).toBe("source=search");
    expect(Object.keys(first.combination).sort()).toEqual(["button", "photo", "title"]);
    const cookie = String(res.getHeader("set-cookie"));
    expect(cookie).toMatch(/^fw_visitor=[\w-]+; Path=\/; Max-Age=31536000; SameSite=Lax; HttpOnly$/);
    const again = await fw.pickFor({ headers: { cookie: `other=1; ${cookie.split(";")[0]}` } }, fakeResponse());
    expect(again.pick).toBe(first.pick);
  });

  it("falls back to the baseline after the timeout, on a refused connection and on an error answer", async () => {
    const hung = createServer(() => undefined);
    servers.push(hung);
    const hungUrl = await listen(hung);
    const started = Date.now();
    const slow = await createFacetwise({ server: hungUrl, page: page.key, key: page.publicKey, timeout: 200, baseline }).pick({ visitor: "v-hung-0001" });
    expect(slow).toMatchObject({ fallback: true, pick: null, combination: baseline, reason: "no answer within 200 ms" });
    expect(Date.now() - started).toBeLessThan(3000);
    const refused = await createFacetwise({ server: "http://127.0.0.1:9", page: page.key, key: page.publicKey, baseline }).pick({ visitor: "v-refused-1" });
    expect(refused.fallback).toBe(true);
    expect(refused.reason).toMatch(/unreachable/);
    const wrongKey = await createFacetwise({ server: h.url, page: page.key, key: "pk_wrong", timeout: 5000, baseline }).pick({ visitor: "v-wrong-key" });
    expect(wrongKey).toMatchObject({ fallback: true, reason: "facetwise answered 403" });
  });

  it("converts once through a 503, refuses a bad value without retrying, and converts for a request by its cookie", async () => {
    let calls = 0;
    const target = new URL(h.url);
    const proxy = createServer((req, res) => {
      calls += 1;
      if (calls === 1) return void res.writeHead(503, { "Content-Type": "application/json" }).end('{"error":{"code":"DATABASE_UNAVAILABLE"}}');
      const forward = httpRequest({ host: target.hostname, port: target.port, path: req.url, method: req.method, headers: req.headers }, (answer) => {
        res.writeHead(answer.statusCode ?? 502, answer.headers);
        answer.pipe(res);
      });
      req.pipe(forward);
    });
    servers.push(proxy);
    const fw = createFacetwise({ server: await listen(proxy), page: page.key, key: page.publicKey, timeout: 5000, baseline, secure: false });
    const res = fakeResponse();
    const direct = createFacetwise({ server: h.url, page: page.key, key: page.publicKey, timeout: 5000, baseline, secure: false });
    const shown = await direct.pickFor({ headers: {} }, res);
    expect(shown.fallback).toBe(false);
    calls = 0;
    expect(await fw.convert(shown.pick, { event: "order-1", value: 49.5 })).toMatchObject({ accepted: true, counted: true });
    expect(calls).toBe(2);
    expect(await fw.convert(shown.pick, { event: "order-1", value: 49.5 })).toMatchObject({ duplicate: true, counted: false });
    calls = 1;
    const bad = await fw.convert(shown.pick, { event: "order-2", value: -3 });
    expect(bad).toMatchObject({ accepted: false, status: 400, error: { field: "value" } });
    expect(calls).toBe(2);
    const req = { headers: { cookie: String(res.getHeader("set-cookie")).split(";")[0] } };
    expect(await fw.convertFor(req, { event: "order-3" })).toMatchObject({ accepted: true, counted: false });
    expect(await fw.convertFor({ headers: {} }, { event: "order-4" })).toMatchObject({ accepted: false });
  });
});
