/**
 * The console's API helper (web/src/api.ts) against a real server: node's fetch stands in for the
 * browser's (relative /api/v1 paths sent to the harness), Map-backed storage for sessionStorage.
 * `tagged` answers the ETag of a read and sends If-Match with an edit (RFC 9110 §8.8.3, §13.1.1):
 * the current tag applies, a stale one gets 412 PAGE_CHANGED (§15.5.13) as an ApiError and changes
 * nothing; plain `api` sends no precondition; `checkToken` still checks a candidate token without
 * touching the stored one.
 */
import { afterAll, beforeAll, expect, it, vi } from "vitest";
import { forEachDatabase } from "../support/databases.ts";
import { ADMIN_TOKEN, useHarness, testPage } from "./harness.ts";
import { api, ApiError, checkToken, SIGNED_OUT, tagged } from "../../web/src/api.ts";

class MemoryStorage {
  private items = new Map<string, string>();
  get length() { return this.items.size; }
  getItem(key: string) { return this.items.get(key) ?? null; }
  setItem(key: string, value: string) { this.items.set(key, String(value)); }
  removeItem(key: string) { this.items.delete(key); }
}

interface Sent { method: string; path: string; ifMatch: string | null }

forEachDatabase("console API helper", (open) => {
  const h = useHarness(open);
  const sent: Sent[] = [];
  const signedOut = vi.fn();

  beforeAll(async () => {
    expect((await h.admin("POST", "/pages", testPage("console-api"))).status).toBe(201);
    const window = new EventTarget();
    window.addEventListener(SIGNED_OUT, signedOut);
    const session = new MemoryStorage();
    session.setItem("facetwise.adminToken", ADMIN_TOKEN);
    vi.stubGlobal("window", window);
    vi.stubGlobal("sessionStorage", session);
    vi.stubGlobal("localStorage", new MemoryStorage());
    const realFetch = globalThis.fetch;
    // the console's paths are relative to its own origin; the harness's own calls are absolute
    vi.stubGlobal("fetch", (path: string, init: RequestInit) => {
      if (!path.startsWith("/")) return realFetch(path, init);
      sent.push({ method: String(init.method), path, ifMatch: new Headers(init.headers).get("if-match") });
      return realFetch(h.url + path, init);
    });
  });
  afterAll(async () => {
    vi.unstubAllGlobals();
  });

  it("reads the ETag, applies an edit that names it and refuses one that names an older version", async () => {
    const read = await tagged<{ name: string }>("GET", "/pages/console-api");
    const server = await h.admin("GET", "/pages/console-api");
    expect(read.etag).toBe(server.headers.get("etag"));
    expect(read.etag).toMatch(/^"[A-Za-z0-9_-]+"$/); // a strong entity tag, §8.8.3
    expect(read.value.name).toBe("Test page console-api");

    const first = await tagged<{ page: { name: string } }>("PATCH", "/pages/console-api", { name: "First" }, read.etag!);
    expect(sent.at(-1)).toEqual({ method: "PATCH", path: "/api/v1/pages/console-api", ifMatch: read.etag });
    expect(first.value.page.name).toBe("First");
    expect(first.etag).not.toBe(read.etag);
    expect(first.etag).toBe((await h.admin("GET", "/pages/console-api")).headers.get("etag"));

    const refused = await tagged("PATCH", "/pages/console-api", { name: "Second" }, read.etag!).catch((e: unknown) => e);
    expect(refused).toBeInstanceOf(ApiError);
    expect(refused).toMatchObject({ status: 412, code: "PAGE_CHANGED", field: "If-Match" });
    expect((refused as ApiError).message).toMatch(/nothing was applied/);
    const after = await h.admin("GET", "/pages/console-api");
    expect(after.body.name).toBe("First");
    expect(after.headers.get("etag")).toBe(first.etag);
    expect(signedOut).not.toHaveBeenCalled();
  });

  it("sends no precondition from plain api() and checks a candidate token without touching the stored one", async () => {
    await api("PATCH", "/pages/console-api", { name: "Unconditional" });
    expect(sent.at(-1)).toMatchObject({ method: "PATCH", ifMatch: null });
    expect((await h.admin("GET", "/pages/console-api")).body.name).toBe("Unconditional");

    const wrong = await checkToken("fw_admin_not-the-token").catch((e: unknown) => e);
    expect(wrong).toMatchObject({ status: 401 });
    expect(sessionStorage.getItem("facetwise.adminToken")).toBe(ADMIN_TOKEN);
    expect(signedOut).not.toHaveBeenCalled();
    await expect(checkToken(ADMIN_TOKEN)).resolves.toBeUndefined();
  });
});
