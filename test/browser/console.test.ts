/**
 * The admin console in a real browser: Debian's Chromium driven by playwright-core against a real
 * facetwise server (started through `facetwise start` on the embedded database, in a temp data
 * folder, on an ephemeral port). It signs in, defines a page with three factors and an exclusion,
 * defines another whose factor name and level value are XSS attempts (shown as inert text),
 * sees leaders on the new page, watches demo traffic produce leaders and a retired
 * combination, keeps the user's place across live refreshes, exports CSV and checks its rows,
 * and signs out. Screenshots go to test-output/.
 *
 * Without /usr/bin/chromium the suite is skipped with one line saying how to enable it, unless
 * FACETWISE_REQUIRE_BROWSER=1 (set by .ci/run), when it fails instead.
 */
import { execFileSync } from "node:child_process";
import { mkdirSync, mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { BrowserContext, Page } from "playwright-core";
import { root, startServer, type Server } from "./startServer.ts";
import { CHROMIUM, CHROMIUM_ARGS, haveChromium, whenChromiumMissing } from "./chromium.ts";

const shots = join(root, "test-output");

whenChromiumMissing("browser suite");

/**
 * XSS attempts. The server refuses "=" and "|" in names (they separate combination keys), so the
 * factor name carries markup without attributes; a level value, which may hold anything, carries
 * a payload that sets a flag if it is ever parsed as HTML.
 */
const XSS_FACTOR = "<b>headline</b><img src onerror>";
const XSS_VALUE = `<img src=x onerror="window.__pwned=1">`;
/** Elements the attempts would create if they were parsed as markup. */
const injected = (page: Page) => page.evaluate(() => document.querySelectorAll("main img, main b, main script").length);
const pwned = (page: Page) => page.evaluate(() => (window as unknown as { __pwned?: number }).__pwned);

/** RFC 4180 (IETF, 2005) section 2: fields split on commas, quoted fields may hold commas and "" quotes, records end in CRLF. */
function parseCsv(text: string): string[][] {
  const rows: string[][] = [];
  let row: string[] = [];
  let field = "";
  let quoted = false;
  for (let i = 0; i < text.length; i += 1) {
    const c = text[i];
    if (quoted) {
      if (c === '"' && text[i + 1] === '"') { field += '"'; i += 1; }
      else if (c === '"') quoted = false;
      else field += c;
    } else if (c === '"') quoted = true;
    else if (c === ",") { row.push(field); field = ""; }
    else if (c === "\r" && text[i + 1] === "\n") { row.push(field); rows.push(row); row = []; field = ""; i += 1; }
    else field += c;
  }
  if (field !== "" || row.length) { row.push(field); rows.push(row); }
  return rows;
}

// a loaded CI machine runs every suite at once: each step gets two minutes, the suite still takes about two
describe.runIf(haveChromium)("admin console in Chromium", { timeout: 120_000 }, () => {
  let server: Server;
  let context: BrowserContext;
  let page: Page;
  let profile: string;
  const api = async <T>(method: string, path: string, body?: unknown, headers: Record<string, string> = {}): Promise<T> => {
    const response = await fetch(`${server.url}/api/v1${path}`, {
      method,
      headers: { Authorization: `Bearer ${server.token}`, "Content-Type": "application/json", ...headers },
      body: body === undefined ? undefined : JSON.stringify(body),
    });
    if (!response.ok) throw new Error(`${method} ${path}: ${response.status} ${await response.text()}`);
    return response.status === 204 ? (undefined as T) : ((await response.json()) as T);
  };
  const shot = async (name: string) => {
    await page.screenshot({ path: join(shots, `${name}.png`), fullPage: true });
  };
  /** A 1280 × 1250 view starting at `selector`, the size the README's screenshots are taken at. */
  const readmeShot = async (name: string, selector: string) => {
    await page.setViewportSize({ width: 1280, height: 1250 });
    await page.locator(selector).first().evaluate((el) => window.scrollTo(0, el.getBoundingClientRect().top + window.scrollY - 16));
    await page.waitForTimeout(300);
    await page.screenshot({ path: join(shots, `console-${name}.png`) });
    await page.setViewportSize({ width: 1280, height: 900 });
  };
  /** The demo page's integration snippet, as the console shows it for copying. */
  let snippet = "";
  /** The token must never appear in an address the console navigates to. */
  const visited: string[] = [];
  /** Chromium's reports of anything the console's Content-Security-Policy refused (must stay empty). */
  const cspViolations: string[] = [];

  beforeAll(async () => {
    mkdirSync(shots, { recursive: true });
    execFileSync(process.execPath, [join(root, "web", "build.mjs")], { cwd: root, stdio: "inherit" });
    server = await startServer();
    const { chromium } = await import("playwright-core");
    profile = mkdtempSync(join(tmpdir(), "facetwise-chromium-"));
    context = await chromium.launchPersistentContext(profile, {
      executablePath: CHROMIUM,
      headless: true,
      acceptDownloads: true,
      viewport: { width: 1280, height: 900 },
      args: CHROMIUM_ARGS,
    });
    page = context.pages()[0] ?? (await context.newPage());
    page.on("framenavigated", (frame) => visited.push(frame.url()));
    page.on("request", (request) => visited.push(request.url()));
    page.on("console", (message) => {
      if (/Content Security Policy/i.test(message.text())) cspViolations.push(message.text());
    });
  }, 180_000);

  afterAll(async () => {
    await context?.close();
    await server?.stop();
    if (profile) rmSync(profile, { recursive: true, force: true });
  }, 30_000);

  it("refuses a wrong token, signs in with the admin token and stays signed in after a reload", async () => {
    await page.goto(`${server.url}/`);
    await page.fill("#token", "fw_admin_not-the-token");
    await page.click("form.signin button[type=submit]");
    await expect.poll(() => page.textContent("form.signin .form-error")).toContain("did not accept");
    await page.fill("#token", server.token);
    await page.click("form.signin button[type=submit]");
    await page.waitForSelector("text=Spokeline repair booking (demo)");
    await page.reload();
    await page.waitForSelector("text=Spokeline repair booking (demo)");
    expect(await page.evaluate(() => sessionStorage.length + localStorage.length)).toBe(1);
  });

  it("defines a page with three factors and an exclusion, counting combinations and checking as you type", async () => {
    await page.click("text=Define a new page");
    await page.fill("#page-name", "Winter tyres");
    await page.fill("#page-key", "winter-tyres");
    const count = page.locator("#definition-count");
    await page.fill('[data-field="factors.0.name"]', "headline");
    await page.fill('[data-field="factors.0.levels.0.name"]', "plain");
    await page.fill('[data-field="factors.0.levels.0.value"]', "Winter tyres fitted today");
    await page.fill('[data-field="factors.0.levels.1.name"]', "question");
    await page.fill('[data-field="factors.0.levels.1.value"]', "Still driving on summer tyres?");
    await expect.poll(() => count.textContent()).toBe("1 factor · 2 combinations · 0 excluded");

    await page.click("text=+ Add a factor");
    await page.fill('[data-field="factors.1.name"]', "hero");
    await page.fill('[data-field="factors.1.levels.0.name"]', "photo");
    await page.fill('[data-field="factors.1.levels.0.value"]', "https://example.org/img/snowy-road.jpg");
    await page.fill('[data-field="factors.1.levels.1.name"]', "video");
    await page.fill('[data-field="factors.1.levels.1.value"]', "https://example.org/img/fitting.mp4");
    await page.locator("fieldset.factor").nth(1).locator("text=+ Add a level").click();
    await page.fill('[data-field="factors.1.levels.2.name"]', "sketch");
    await page.fill('[data-field="factors.1.levels.2.value"]', "https://example.org/img/tread.svg");
    await page.click("text=+ Add a factor");
    await page.fill('[data-field="factors.2.name"]', "cta");
    await page.fill('[data-field="factors.2.levels.0.name"]', "book");
    await page.fill('[data-field="factors.2.levels.0.value"]', "#2f6f73");
    await page.fill('[data-field="factors.2.levels.1.name"]', "call");
    await page.fill('[data-field="factors.2.levels.1.value"]', "#c7843c");
    await expect.poll(() => count.textContent()).toBe("3 factors · 12 combinations · 0 excluded");

    // the server's own message for a level without a name, placed beside the input
    await page.fill('[data-field="factors.2.levels.1.name"]', "");
    await expect.poll(() => count.textContent()).toBe("Not valid yet");
    await expect.poll(() => page.getAttribute('[data-field="factors.2.levels.1.name"]', "aria-invalid")).toBe("true");
    const message = await page.textContent("#definition-problems");
    expect(message).toMatch(/factors\.2\.levels\.1\.name/);
    await page.fill('[data-field="factors.2.levels.1.name"]', "call");
    await expect.poll(() => count.textContent()).toBe("3 factors · 12 combinations · 0 excluded");

    // never a video hero with the call button: the rule fixes hero and cta, so it removes one combination per headline
    await page.click("text=+ Add an exclusion rule");
    await page.selectOption('[aria-label="Rule 1, condition 1 factor"]', { label: "hero" });
    await page.selectOption('[aria-label="Rule 1, condition 1 level"]', { label: "video" });
    await page.selectOption('[aria-label="Rule 1, condition 2 factor"]', { label: "cta" });
    await page.selectOption('[aria-label="Rule 1, condition 2 level"]', { label: "call" });
    await expect.poll(() => count.textContent()).toBe("3 factors · 12 combinations · 2 excluded");

    // segment keys, settings and the page key are checked as you type too, each message beside its field
    const backToValid = () => expect.poll(() => count.textContent()).toBe("3 factors · 12 combinations · 2 excluded");
    await page.fill("#segment-by", "source|x");
    await expect.poll(() => page.getAttribute("#segment-by", "aria-invalid")).toBe("true");
    expect(await count.textContent()).toBe("Not valid yet");
    await page.fill("#segment-by", "source");
    await backToValid();
    await page.fill('input[name="attributionWindowHours"]', "0");
    await expect.poll(() => page.getAttribute('input[name="attributionWindowHours"]', "aria-invalid")).toBe("true");
    expect(await page.textContent('[data-error-for="settings.attributionWindowHours"]')).toContain("must be more than 0");
    await page.fill('input[name="attributionWindowHours"]', "0.0005");
    await backToValid();
    await page.fill("#page-key", "bike-repair-demo");
    await expect.poll(() => page.getAttribute("#page-key", "aria-invalid")).toBe("true");
    await page.fill("#page-key", "winter-tyres");
    await backToValid();
    await page.click("text=More settings");
    await page.fill('input[name="foldIntervalSeconds"]', "1");
    await shot("editor-1280");
    await readmeShot("define", "fieldset.factor >> nth=1");
    await page.click("text=Create page");
    await page.waitForSelector("h1:has-text('Winter tyres')");
    expect(page.url()).toContain("#/p/winter-tyres");
  });

  it("shows XSS attempts typed as a factor name and a level value as inert text", async () => {
    await page.click("text=New page");
    await page.fill("#page-name", "Markup check");
    await page.fill("#page-key", "markup-check");
    await page.fill('[data-field="factors.0.name"]', XSS_FACTOR);
    await page.fill('[data-field="factors.0.levels.0.name"]', "plain");
    await page.fill('[data-field="factors.0.levels.0.value"]', "Plain text");
    await page.fill('[data-field="factors.0.levels.1.name"]', "question");
    await page.fill('[data-field="factors.0.levels.1.value"]', XSS_VALUE);
    await expect.poll(() => page.textContent("#definition-count")).toBe("1 factor · 2 combinations · 0 excluded");
    await page.click("text=Create page");
    await page.waitForSelector("h1:has-text('Markup check')");
    await page.waitForSelector("[data-testid=leader]");
    expect(await page.textContent("[data-testid=leader]")).toContain(XSS_FACTOR);
    await page.click("role=tab[name='Manage']");
    const legend = page.locator("fieldset.factor legend").first();
    await expect.poll(() => legend.textContent()).toBe(XSS_FACTOR);
    expect(await page.inputValue('[aria-label="Value of ' + XSS_FACTOR + ' level question"]')).toBe(XSS_VALUE);
    await page.click("role=tab[name='Export & integrate']");
    await expect.poll(() => page.textContent(".export-table")).toContain(XSS_FACTOR);
    expect(await pwned(page)).toBeUndefined();
    expect(await injected(page)).toBe(0);
    await shot("markup-check-1280");
  });

  it("shows a leader per segment once the new page has traffic, with each level's value", async () => {
    const created = await api<{ publicKey: string }>("GET", "/pages/winter-tyres");
    // every simulated visitor comes from 127.0.0.1: lift the page's per-address rate limit (default 120 a minute)
    await api("PATCH", "/pages/winter-tyres", { settings: { addressRequestsPerMinute: 100_000 } });
    // demo traffic for this test page through the public API (invented rates: they only feed the screen)
    const rate = (combo: Record<string, { level: string }>) => (combo.hero.level === "photo" ? 0.5 : 0.1);
    const visit = async (i: number) => {
      const pick = await api<{ pick: string; combination: Record<string, { level: string }> }>(
        "POST", "/pages/winter-tyres/picks", { visitor: `v${i}`, context: { source: i % 2 ? "search" : "social" } },
        { "X-Page-Key": created.publicKey, Authorization: "" },
      );
      if (((i * 7919) % 100) / 100 < rate(pick.combination)) {
        await api("POST", "/pages/winter-tyres/outcomes", { pick: pick.pick }, { "X-Page-Key": created.publicKey, Authorization: "" });
      }
    };
    for (let batch = 0; batch < 10; batch += 1) {
      await Promise.all(Array.from({ length: 20 }, (_, j) => visit(batch * 20 + j)));
    }
    await page.goto(`${server.url}/#/p/winter-tyres/results`);
    await page.waitForSelector("table.overview tbody tr:nth-child(3)", { timeout: 45_000 });
    const leader = await page.textContent("[data-testid=leader]");
    expect(leader).toMatch(/Winter tyres fitted today|Still driving on summer tyres\?/);
    expect(leader).toMatch(/Chance of being best/);
    expect(await page.locator("table.overview tbody tr").count()).toBe(3); // search, social, pooled
    await shot("new-page-results-1280");
  });

  it("edits the running page, saying before and after what happens to what was learned", async () => {
    await page.click("role=tab[name='Manage']");
    await page.click("text=+ Add a level to cta");
    await page.fill('input[aria-label="New level name for cta"]', "chat");
    await page.fill('input[aria-label="New level value for cta"]', "#5b5f97");
    await expect.poll(() => page.textContent(".consequences")).toContain("everything learned so far is kept");
    await expect.poll(() => page.textContent(".manage .count")).toBe("After these changes: 3 factors · 18 combinations · 2 excluded");
    await page.click("text=Apply changes");
    const learned = page.locator(".learned");
    await learned.waitFor();
    const account = (await learned.textContent()) ?? "";
    expect(account).toMatch(/cta=chat/); // the server names the new coefficients it starts from the prior
    await page.click("button:has-text('Pause')");
    await expect.poll(() => page.textContent(".page-title .badge")).toContain("Paused");
    await page.click("button:has-text('Resume learning')");
    await expect.poll(() => page.textContent(".page-title .badge")).toContain("Learning");
    const pageNow = await api<{ factors: { name: string; levels: { name: string }[] }[]; status: string }>("GET", "/pages/winter-tyres");
    expect(pageNow.status).toBe("active");
    expect(pageNow.factors[2].levels.map((l) => l.name)).toEqual(["book", "call", "chat"]);
  });

  it("streams demo traffic on the demo page until leaders and a retired combination appear", async () => {
    await page.goto(`${server.url}/#/p/bike-repair-demo`);
    await page.selectOption("#demo-visitors", "2000");
    await page.click("text=Send demo visitors");
    await expect.poll(() => page.textContent(".demo [role=status]")).toMatch(/Sending 2,000 visitors/);
    await page.waitForSelector("[data-testid=leader]", { timeout: 60_000 });
    // the spread the last fold learned, in words (the demo's sources want different pages)
    expect(await page.locator("[data-testid=segment-spread]").first().textContent()).toMatch(/by about ±\d\.\d\d in log-odds \(×\d\.\d\d–×\d\.\d\d in odds\)/);
    await page.waitForSelector("#tab-retired .count-pill:not([hidden])", { timeout: 90_000 });
    await shot("demo-results-1280");
    await readmeShot("results", ".tabs");
    await page.click("role=tab[name=/Retired/]");
    const item = page.locator("[data-testid=retired-item]").first();
    await item.waitFor();
    expect(await item.textContent()).toMatch(/Almost no chance of being the best: .* for \d+ updates in a row/);
    await shot("demo-retired-1280");
  }, 180_000);

  it("lists each page with how many of its segments have settled", async () => {
    await page.goto(`${server.url}/#/`);
    const card = page.locator("article.page-card", { has: page.locator("a[href='#/p/winter-tyres']") });
    // the card says what GET /pages says (the list refreshes itself every 10 s)
    const expected = async () => {
      const { totals } = await api<{ totals: { segments: number; settled: number } }>("GET", "/pages/winter-tyres");
      return `${totals.settled} of ${totals.segments} segment${totals.segments === 1 ? "" : "s"} settled`;
    };
    expect(await expected()).toMatch(/^\d+ of [1-9]\d* segments? settled$/);
    await expect.poll(async () => (await card.textContent())?.includes(await expected()), { timeout: 15_000 }).toBe(true);
    // back where the next test expects to be
    await page.goto(`${server.url}/#/p/bike-repair-demo`);
    await page.waitForSelector("role=tab[name='Results']");
  });

  it("keeps open panels, scroll position and typed input across live refreshes", async () => {
    await page.click("role=tab[name='Results']");
    const details = page.locator("details[data-panel^='alloc-table']");
    await details.locator("summary").click();
    await page.evaluate(() => window.scrollTo(0, 900));
    const before = await page.evaluate(() => window.scrollY);
    const refreshed = () => page.waitForResponse((r) => r.url().endsWith("/report"), { timeout: 15_000 });
    await refreshed();
    await refreshed();
    expect(await details.getAttribute("open")).not.toBeNull();
    expect(Math.abs((await page.evaluate(() => window.scrollY)) - before)).toBeLessThanOrEqual(2);

    await page.click("role=tab[name='Manage']");
    await page.fill("#manage-name", "Spokeline repair booking (renamed)");
    await refreshed();
    expect(await page.inputValue("#manage-name")).toBe("Spokeline repair booking (renamed)");
    await expect.poll(() => page.textContent(".consequences")).toContain("Rename the page");
  });

  it("is usable by keyboard: arrow keys move between tabs, Enter chooses a segment", async () => {
    await page.goto(`${server.url}/#/p/bike-repair-demo/results`);
    await page.waitForSelector("[data-testid=leader]");
    await page.focus("#tab-results");
    await page.keyboard.press("ArrowRight");
    await expect.poll(() => page.evaluate(() => document.activeElement?.id)).toBe("tab-retired");
    expect(page.url()).toContain("/retired");
    await page.keyboard.press("ArrowLeft");
    await expect.poll(() => page.evaluate(() => document.activeElement?.id)).toBe("tab-results");
    // a live refresh leaves keyboard focus where it was
    await page.waitForResponse((r) => r.url().endsWith("/report"), { timeout: 15_000 });
    await page.waitForTimeout(200);
    expect(await page.evaluate(() => document.activeElement?.id)).toBe("tab-results");
    const second = page.locator("table.overview tbody tr:nth-child(2) button");
    const name = (await second.textContent()) ?? "";
    await second.focus();
    await page.keyboard.press("Enter");
    await expect.poll(() => page.textContent("#segment-title")).toContain(name);
    expect(await second.getAttribute("aria-pressed")).toBe("true");
  });

  it("downloads the CSV export with one row per segment matching the JSON export", async () => {
    await page.click("role=tab[name='Export & integrate']");
    // demo traffic may fold a new model between the two downloads; compare a pair from one model version
    for (let attempt = 1; ; attempt += 1) {
      const before = await api<{ modelVersion: number }>("GET", "/pages/bike-repair-demo/report");
      const [download] = await Promise.all([page.waitForEvent("download"), page.click("text=Download CSV")]);
      const rows = parseCsv(readFileSync(await download.path(), "utf8"));
      const json = await api<{ modelVersion: number; segments: { segment: string; combination: string }[] }>("GET", "/pages/bike-repair-demo/export?format=json");
      if (json.modelVersion !== before.modelVersion && attempt < 6) continue;
      const [header, ...body] = rows;
      expect(header.slice(0, 3)).toEqual(["segment", "status", "combination"]);
      expect(body.length).toBe(json.segments.length);
      // a level value with a comma ("4.8 ★ from 2,300 riders") must stay one field
      for (const row of body) expect(row.length).toBe(header.length);
      const byCsv = Object.fromEntries(body.map((row) => [row[0], row[2]]));
      for (const seg of json.segments) expect(byCsv[seg.segment]).toBe(seg.combination);
      break;
    }
    await expect.poll(() => page.textContent(".snippet code")).toContain("/client/v1.js");
    snippet = (await page.textContent(".snippet code")) ?? "";
    // the demo traffic's sources, as sent and as normalised
    await expect.poll(() => page.textContent("section[aria-labelledby=context-title]")).toContain('"search"');
    await shot("export-1280");
  });

  it("fits a 390 px phone width without sideways scrolling", async () => {
    await page.setViewportSize({ width: 390, height: 844 });
    await page.click("role=tab[name='Results']");
    await page.waitForSelector("[data-testid=leader]");
    await page.waitForTimeout(400);
    expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
    await shot("demo-results-390");
    await page.goto(`${server.url}/#/new`);
    await page.waitForSelector("#page-name");
    expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
    await shot("editor-390");
    await page.setViewportSize({ width: 1280, height: 900 });
  });

  it("signs out, forgetting the token, which never appeared in an address", async () => {
    await page.click("text=Sign out");
    await page.waitForSelector("#token");
    expect(await page.evaluate(() => sessionStorage.length + localStorage.length)).toBe(0);
    expect(visited.length).toBeGreaterThan(0);
    for (const url of visited) expect(url).not.toContain(server.token);
  });

  it("the copied snippet loads the client, which picks on load, renders the level values and reports the conversion", async () => {
    const demo = await api<{ factors: { name: string; levels: { name: string; value?: string }[] }[] }>("GET", "/pages/bike-repair-demo");
    const headlines = demo.factors.find((f) => f.name === "headline")?.levels.map((l) => l.value ?? l.name) ?? [];
    expect(headlines.length).toBeGreaterThan(1);
    // the console ran under its strict Content-Security-Policy without a single refusal
    expect(cspViolations).toEqual([]);
    const consoleResponse = await page.goto(`${server.url}/`);
    expect(consoleResponse?.headers()["content-security-policy"]).toMatch(/script-src 'self'/);
    // exactly what the API answers for scripting
    expect(snippet).toBe((await api<{ html: string }>("GET", "/pages/bike-repair-demo/snippet")).html);
    // a landing page (answered by the browser itself, so without the console's policy) on the
    // server's own origin, with the snippet pasted as the console shows it
    await page.route(`${server.url}/landing-test.html`, (route) => route.fulfill({
      contentType: "text/html",
      body: `<!doctype html><html><head>${snippet}</head><body><h1 data-facet="headline">Our default headline</h1><a data-facet="cta" href="#">Default</a></body></html>`,
    }));
    await page.goto(`${server.url}/landing-test.html`);
    await page.waitForFunction(() => "facetwise" in window);
    const ready = await page.evaluate(() => (window as unknown as { facetwise: { ready: Promise<{ applied: boolean }> } }).facetwise.ready);
    expect(ready.applied).toBe(true);
    expect(headlines).toContain(await page.textContent("h1"));
    const [response] = await Promise.all([
      page.waitForResponse((r) => r.url().includes("/outcomes")),
      page.evaluate(() => (window as unknown as { facetwise: { convert(c: object): Promise<boolean> } }).facetwise.convert({ event: "order-1" })),
    ]);
    expect(response.status()).toBe(202);
  });
});
