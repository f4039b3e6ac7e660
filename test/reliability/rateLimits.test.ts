/**
 * Rate limits answering 429 with Retry-After (RFC 6585 §4, RFC 9110 §10.2.3) on a live server:
 * many new visitors from one address, one page's total, and wrong admin tokens; nothing is
 * written for a refused request. Addresses come from X-Forwarded-For with `trust proxy`
 * "loopback", as behind a reverse proxy on the same machine.
 */
import { afterAll, beforeAll, expect, it } from "vitest";
import { forEachDatabase } from "../support/databases.ts";
import { ADMIN_TOKEN, startHarness, testPage, type Harness } from "../integration/harness.ts";

forEachDatabase("rate limits", (open) => {
  let h: Harness;
  beforeAll(async () => {
    h = await startHarness(await open(), { rateLimits: true, trustProxy: "loopback" });
  });
  afterAll(async () => {
    await h?.close();
    await h?.db.close();
  });

  const pickFrom = (page: { key: string; publicKey: string }, address: string, visitor: string) =>
    h.call("POST", `/api/v1/pages/${page.key}/picks`, { body: { visitor }, headers: { "x-page-key": page.publicKey, "x-forwarded-for": address } });

  it("limits new visitors from one address per page, then serves another address", async () => {
    const created = await h.admin("POST", "/pages", testPage("limited", { settings: { addressRequestsPerMinute: 5 } }));
    const page = { key: "limited", publicKey: created.body.publicKey };
    const statuses: number[] = [];
    for (let i = 0; i < 8; i++) statuses.push((await pickFrom(page, "203.0.113.7", `many-${i}`)).status);
    expect(statuses).toEqual([200, 200, 200, 200, 200, 429, 429, 429]);
    const refused = await pickFrom(page, "203.0.113.7", "many-9");
    expect(refused.body.error.code).toBe("RATE_LIMITED");
    expect(Number(refused.headers.get("retry-after"))).toBeGreaterThanOrEqual(1);
    expect(refused.headers.get("access-control-allow-origin")).toBe("*"); // the landing page can read it
    // outcomes share the bucket
    const outcome = await h.call("POST", "/api/v1/pages/limited/outcomes", { body: { pick: "0b6a1c2e-9d7f-4e55-8a1b-3c4d5e6f7a8b" }, headers: { "x-page-key": page.publicKey, "x-forwarded-for": "203.0.113.7" } });
    expect(outcome.status).toBe(429);
    expect((await h.db.pool.query("SELECT count(*)::int AS n FROM pick p JOIN page g ON g.id = p.page_id WHERE g.key = 'limited'")).rows[0].n).toBe(5);
    expect((await pickFrom(page, "198.51.100.9", "other")).status).toBe(200);
  });

  it("limits one page's total across addresses", async () => {
    const created = await h.admin("POST", "/pages", testPage("capped", { settings: { pageRequestsPerMinute: 3 } }));
    const page = { key: "capped", publicKey: created.body.publicKey };
    const statuses: number[] = [];
    for (let i = 0; i < 5; i++) statuses.push((await pickFrom(page, `192.0.2.${i + 1}`, `v${i}`)).status);
    expect(statuses).toEqual([200, 200, 200, 429, 429]);
  });

  it("brakes unknown page keys per address", async () => {
    // 60 a minute refill one a second: a slow machine may earn a few back while sending
    const statuses: number[] = [];
    const started = performance.now();
    for (let i = 0; i < 70; i++) statuses.push((await pickFrom({ key: `nothing-${i}`, publicKey: "pk_x" }, "203.0.113.99", "v")).status);
    const seconds = (performance.now() - started) / 1000;
    expect(statuses.slice(0, 60).every((s) => s === 404)).toBe(true);
    expect(statuses.filter((s) => s === 404).length).toBeLessThanOrEqual(60 + Math.ceil(seconds));
    expect(statuses.filter((s) => s === 429).length).toBeGreaterThan(0);
    expect(statuses.every((s) => s === 404 || s === 429)).toBe(true);
  });

  it("brakes wrong admin tokens per address, even before the right one", async () => {
    const call = (token: string, address: string) => h.call("GET", "/api/v1/pages", { headers: { authorization: `Bearer ${token}`, "x-forwarded-for": address } });
    const statuses: number[] = [];
    for (let i = 0; i < 12; i++) statuses.push((await call(`fw_admin_guess-${i}`, "203.0.113.66")).status);
    expect(statuses).toEqual([...Array(10).fill(401), 429, 429]);
    const right = await call(ADMIN_TOKEN, "203.0.113.66");
    expect(right.status).toBe(429);
    expect(right.body.error.message).toMatch(/wrong admin tokens/);
    expect(Number(right.headers.get("retry-after"))).toBeGreaterThanOrEqual(1);
    expect((await call(ADMIN_TOKEN, "203.0.113.67")).status).toBe(200);
  });
});
