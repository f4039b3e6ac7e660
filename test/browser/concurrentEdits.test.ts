/**
 * Two admins editing one page in the console (issue 11: "never lose an acknowledged edit"). Two
 * browser contexts — two separate sign-ins, as two people would have — open the page's Manage tab
 * on the same version. A saves first; B's save names the version B's form shows (If-Match, RFC 9110
 * §13.1.1), so the server refuses it with 412 (§15.5.13) and B's console says nothing was saved and
 * offers to load the current page. A's acknowledged edit must still be on the server; after loading,
 * B's typed edits are still in the form and apply on the new version. The status buttons (also a
 * PATCH) are refused the same way.
 *
 * Screenshot: test-output/console-page-changed-1280.png.
 */
import { execFileSync } from "node:child_process";
import { mkdirSync } from "node:fs";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Browser, Page, Request } from "playwright-core";
import { root, startServer, type Server } from "./startServer.ts";
import { CHROMIUM, CHROMIUM_ARGS, haveChromium, whenChromiumMissing } from "./chromium.ts";

whenChromiumMissing("concurrent-edit browser suite");

const KEY = "two-editors";
const VALUE = 'input[aria-label="Value of headline level plain"]';
const LOAD = "role=button[name='Load the current page']";

interface StoredPage { name: string; status: string; factors: { name: string; levels: { name: string; value?: string }[] }[] }

describe.runIf(haveChromium)("two admins editing one page in the console", { timeout: 120_000 }, () => {
  let server: Server;
  let browser: Browser;
  let a: Page;
  let b: Page;
  /** If-Match of every PATCH each console sent (null: sent without one). */
  const ifMatch: Record<"a" | "b", (string | null)[]> = { a: [], b: [] };
  const cspViolations: string[] = [];
  /** The page's ETag after A's first save. */
  let versionAfterA: string | null = null;

  const api = async (method: string, path: string, body?: unknown) => {
    const response = await fetch(`${server.url}/api/v1${path}`, {
      method,
      headers: { Authorization: `Bearer ${server.token}`, "Content-Type": "application/json" },
      body: body === undefined ? undefined : JSON.stringify(body),
    });
    return { status: response.status, etag: response.headers.get("etag"), body: (await response.json()) as StoredPage };
  };
  const levelValue = (p: StoredPage, factor: string, level: string) =>
    p.factors.find((f) => f.name === factor)?.levels.find((l) => l.name === level)?.value;

  /** A fresh context (its own storage, so its own sign-in) on the page's Manage tab. */
  const openManage = async (who: "a" | "b"): Promise<Page> => {
    const context = await browser.newContext({ viewport: { width: 1280, height: 900 } });
    const page = await context.newPage();
    page.on("request", (request: Request) => {
      if (request.method() === "PATCH") ifMatch[who].push(request.headers()["if-match"] ?? null);
    });
    page.on("console", (message) => {
      if (/Content Security Policy/i.test(message.text())) cspViolations.push(message.text());
    });
    await page.goto(`${server.url}/`);
    await page.fill("#token", server.token);
    await page.click("form.signin button[type=submit]");
    await page.waitForSelector("article.page-card");
    await page.goto(`${server.url}/#/p/${KEY}/manage`);
    await page.waitForSelector(VALUE);
    return page;
  };

  beforeAll(async () => {
    execFileSync(process.execPath, [join(root, "web", "build.mjs")], { cwd: root, stdio: "inherit" });
    server = await startServer();
    const created = await fetch(`${server.url}/api/v1/pages`, {
      method: "POST",
      headers: { Authorization: `Bearer ${server.token}`, "Content-Type": "application/json" },
      body: JSON.stringify({
        key: KEY,
        name: "Two editors",
        factors: [
          { name: "headline", levels: [{ name: "plain", value: "Repairs while you wait" }, { name: "bold", value: "Back on the road today" }] },
          { name: "button", levels: [{ name: "book", value: "Book a slot" }, { name: "call", value: "Call us" }] },
        ],
      }),
    });
    expect(created.status).toBe(201);
    const { chromium } = await import("playwright-core");
    browser = await chromium.launch({ executablePath: CHROMIUM, headless: true, args: CHROMIUM_ARGS });
    [a, b] = await Promise.all([openManage("a"), openManage("b")]);
  }, 180_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  }, 30_000);

  it("refuses the second save of one version with a clear message and keeps the first on the server", async () => {
    const opened = await api("GET", `/pages/${KEY}`);
    await a.fill(VALUE, "Written by A");
    await a.click("text=Apply changes");
    await a.locator(".learned").waitFor();
    const afterA = await api("GET", `/pages/${KEY}`);
    expect(levelValue(afterA.body, "headline", "plain")).toBe("Written by A");
    versionAfterA = afterA.etag;

    // B still shows the version both opened, and edits the same value (and the name)
    expect(await b.inputValue(VALUE)).toBe("Repairs while you wait");
    await b.fill(VALUE, "Written by B");
    await b.fill("#manage-name", "Two editors (B)");
    await b.click("text=Apply changes");
    const notice = b.locator(".page-changed");
    await notice.waitFor();
    const text = (await notice.textContent()) ?? "";
    expect(text).toContain("Nothing was saved.");
    expect(text).toContain("Someone changed this page after this form was loaded");
    expect(await b.getAttribute(".page-changed >> xpath=..", "role")).toBe("alert");
    await b.setViewportSize({ width: 1280, height: 1250 });
    mkdirSync(join(root, "test-output"), { recursive: true });
    await b.screenshot({ path: join(root, "test-output", "console-page-changed-1280.png") });
    // focus is on the way out, and nothing B typed is gone
    expect(await b.evaluate(() => document.activeElement?.textContent)).toBe("Load the current page");
    expect(await b.inputValue(VALUE)).toBe("Written by B");
    expect(await b.inputValue("#manage-name")).toBe("Two editors (B)");

    // A's acknowledged edit is still there and B's is not (without If-Match B's value would have replaced it)
    const afterB = await api("GET", `/pages/${KEY}`);
    expect(levelValue(afterB.body, "headline", "plain")).toBe("Written by A");
    expect(afterB.body.name).toBe("Two editors");
    expect(afterB.etag).toBe(afterA.etag);
    // each console named the version its form showed: the one both opened (RFC 9110 §8.8.3 strong tag)
    expect(opened.etag).toMatch(/^"[A-Za-z0-9_-]+"$/);
    expect(ifMatch).toEqual({ a: [opened.etag], b: [opened.etag] });
  });

  it("loads the current page keeping B's edits, which then apply to the new version", async () => {
    await b.click(LOAD);
    await expect.poll(() => b.textContent(".result-slot")).toContain("Current page loaded");
    expect(await b.textContent(".result-slot")).toContain("with your edits carried over");
    expect(await b.locator(".page-changed").count()).toBe(0);
    expect(await b.inputValue(VALUE)).toBe("Written by B");
    expect(await b.inputValue("#manage-name")).toBe("Two editors (B)");
    const consequences = (await b.textContent(".consequences")) ?? "";
    expect(consequences).toContain("Rename the page to “Two editors (B)”");
    expect(consequences).toContain("Change the value of headline “plain”");
    await b.click("text=Apply changes");
    await expect.poll(() => b.textContent(".result-slot")).toContain("Done.");
    const now = await api("GET", `/pages/${KEY}`);
    expect(levelValue(now.body, "headline", "plain")).toBe("Written by B");
    expect(now.body.name).toBe("Two editors (B)");
    // B's second PATCH named the version A's save produced
    expect(versionAfterA).not.toBe(ifMatch.b[0]);
    expect(ifMatch.b).toEqual([ifMatch.b[0], versionAfterA]);
  });

  it("refuses a status change made on an older version the same way", async () => {
    // A's form shows the version its own save produced, which B's save has since replaced
    await a.click("button:has-text('Pause')");
    await a.locator(".page-changed").waitFor();
    expect((await api("GET", `/pages/${KEY}`)).body.status).toBe("active");
    await a.click(LOAD);
    await expect.poll(() => a.textContent(".result-slot")).toContain("redo your change on it");
    expect(await a.inputValue(VALUE)).toBe("Written by B");
    const current = await api("GET", `/pages/${KEY}`);
    await a.click("button:has-text('Pause')");
    await expect.poll(async () => (await api("GET", `/pages/${KEY}`)).body.status).toBe("paused");
    // the refused pause named A's own last version; the one after loading, the current one
    expect(ifMatch.a).toEqual([ifMatch.a[0], versionAfterA, current.etag]);
    expect(cspViolations).toEqual([]);
  });
});
