/**
 * Security headers (issue 11, item 7), checked against the OWASP HTTP Headers Cheat Sheet and
 * CSP Level 3: the console and its assets carry a Content-Security-Policy without 'unsafe-inline'
 * and with frame-ancestors 'none', nosniff and a referrer policy; the console's HTML has no inline
 * script, style element, style attribute or event-handler attribute for that policy to block;
 * CORS `*` is on the two public routes only; a short FACETWISE_ADMIN_TOKEN is refused.
 */
import { afterAll, beforeAll, expect, it } from "vitest";
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { spawnSync } from "node:child_process";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { forEachDatabase } from "../support/databases.ts";
import { startHarness, testPage, type Harness } from "./harness.ts";
import { DEFAULT_WEB_DIR } from "../../src/http/server.ts";
import { checkAdminToken } from "../../src/service/auth.ts";

forEachDatabase("security headers", (open, target) => {
  let h: Harness;
  let publicKey: string;
  beforeAll(async () => {
    h = await startHarness(await open(), { webDir: DEFAULT_WEB_DIR });
    publicKey = (await h.admin("POST", "/pages", testPage("headers"))).body.publicKey;
  });
  afterAll(async () => {
    await h?.close();
    await h?.db.close();
  });

  it("puts a strict policy on the console, its assets and the API", async () => {
    for (const path of ["/", "/index.html", "/main.js", "/console.css", "/api/v1/pages", "/no-such-file"]) {
      const r = await h.call("GET", path);
      const csp = r.headers.get("content-security-policy") ?? "";
      expect(csp, path).toMatch(/default-src 'none'/);
      expect(csp, path).toMatch(/script-src 'self'(;|$)/);
      expect(csp, path).toMatch(/frame-ancestors 'none'/);
      expect(csp, path).not.toMatch(/unsafe-inline|unsafe-eval|\*/);
      expect(r.headers.get("x-content-type-options"), path).toBe("nosniff");
      expect(r.headers.get("referrer-policy"), path).toBe("no-referrer");
      expect(r.headers.get("x-frame-options"), path).toBe("DENY");
    }
  });

  it("allows any origin on the two public routes only", async () => {
    const preflight = (path: string) => h.call("OPTIONS", path, { headers: { origin: "https://shop.example", "access-control-request-method": "POST" } });
    expect((await preflight("/api/v1/pages/headers/picks")).headers.get("access-control-allow-origin")).toBe("*");
    expect((await preflight("/api/v1/pages/headers/outcomes")).headers.get("access-control-allow-origin")).toBe("*");
    const picked = await h.pick({ key: "headers", publicKey }, "v1");
    expect(picked.headers.get("access-control-allow-origin")).toBe("*");
    for (const path of ["/api/v1/pages", "/api/v1/pages/headers", "/api/v1/session", "/"]) {
      expect((await h.call("GET", path, { headers: { origin: "https://shop.example" } })).headers.get("access-control-allow-origin"), path).toBeNull();
    }
  });

  if (target.kind === "embedded") {
    it("serves console HTML with no inline script, style or event handler", () => {
      const pages = readdirSync(DEFAULT_WEB_DIR).filter((f) => f.endsWith(".html"));
      expect(pages.length).toBeGreaterThan(0);
      for (const file of pages) {
        const html = readFileSync(join(DEFAULT_WEB_DIR, file), "utf8");
        for (const tag of html.match(/<script\b[^>]*>/gi) ?? []) expect(tag, file).toMatch(/\ssrc=/);
        expect(html, file).not.toMatch(/<style\b|\sstyle=|\son[a-z]+=|javascript:/i);
      }
    });

    it("refuses a FACETWISE_ADMIN_TOKEN shorter than 32 characters, saying how long it must be", () => {
      expect(() => checkAdminToken("short-token")).toThrow(/FACETWISE_ADMIN_TOKEN: it has 11 characters; use at least 32/);
      expect(() => checkAdminToken("x".repeat(32))).not.toThrow();
      expect(() => checkAdminToken(undefined)).not.toThrow();
      // the command refuses to start, before touching the data folder
      const data = join(tmpdir(), `facetwise-short-token-${process.pid}`);
      const run = spawnSync(process.execPath, ["--import", "tsx", "src/cli.ts", "start", "--port", "0", "--data", data], {
        env: { ...process.env, DATABASE_URL: "", FACETWISE_ADMIN_TOKEN: "short" }, encoding: "utf8", timeout: 60_000,
      });
      expect(run.status).toBe(1);
      expect(run.stderr).toMatch(/FACETWISE_ADMIN_TOKEN: it has 5 characters; use at least 32/);
      expect(existsSync(data)).toBe(false);
    });
  }
});
