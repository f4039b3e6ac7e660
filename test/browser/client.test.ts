/**
 * The landing-page client in Debian's Chromium (playwright-core): one facetwise server
 * (`facetwise start`, embedded database), one small landing-page server of our own on another
 * origin (and, through --host-resolver-rules, on the non-secure origin http://landing.test), and a
 * fresh browser context per visitor. Failure modes are made with Playwright's request routing
 * (hung, 500, refused, malformed, late) or init scripts (storage that throws, no randomUUID, no
 * fetch); the strict CSP is a real response header. Every failure must show the page's own
 * content by the timeout and never throw into the page; the happy paths check rendering, sticky
 * picks, campaign context, and conversions that survive a 503 and a page navigation.
 *
 * It prints the measured figures (bytes shipped, time to content cold and warm); they are
 * measurements, not pass/fail thresholds.
 */
import { createHash } from "node:crypto";
import { createServer, type Server as HttpServer } from "node:http";
import { existsSync } from "node:fs";
import type { AddressInfo } from "node:net";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Browser, BrowserContext, BrowserContextOptions, Page, Route } from "playwright-core";
import { startServer, type Server } from "./startServer.ts";

const CHROMIUM = "/usr/bin/chromium";
const haveChromium = existsSync(CHROMIUM);
if (!haveChromium) console.log("client browser suite skipped: /usr/bin/chromium is missing; enable it with `apt-get install chromium`");

const KEY = "client-test";
/** A factor name that ends a JS comment line (U+2028) and a script element if ever pasted raw. */
const WEIRD_FACTOR = "x\u2028alert(1)//</script>";
/** A context key name (segment keys are plainer) with everything an HTML attribute or a comma list could trip on. */
const WEIRD_KEY = "k\u2029\"'</script>,%";
const SCRIPT_VALUE = "Fresh </script><script>window.__pwned=1</script> headline";
const SEPARATOR_VALUE = "line\u2028two\u2029three";
const OWN_HEADLINE = "Own headline";

interface Ready { t: number; applied: boolean; reason: string; pick: string | null }
interface Snippet { html: string; integrity: string; csp: string }

/** HTML attribute escaping for the test's own markup (HTML Living Standard, attribute values). */
const attr = (s: string) => s.replace(/&/g, "&amp;").replace(/"/g, "&quot;").replace(/</g, "&lt;").replace(/>/g, "&gt;");

const BODY = `<h1 data-facet="headline">${OWN_HEADLINE}</h1>
<div data-facet="layout" id="layout">Own layout</div>
<button data-facet="cta" data-facet-style="background-color" id="cta">Own button</button>
<p data-facet="${attr(WEIRD_FACTOR)}" id="weird">Own weird</p>`;

const IPHONE = "Mozilla/5.0 (iPhone; CPU iPhone OS 17_0 like Mac OS X) AppleWebKit/605.1.15 (KHTML, like Gecko) Version/17.0 Mobile/15E148 Safari/604.1";

describe.runIf(haveChromium)("landing-page client in Chromium", { timeout: 60_000 }, () => {
  let fw: Server;
  let browser: Browser;
  let landing: HttpServer;
  let landingPort = 0;
  const routes = new Map<string, { html: string; headers?: Record<string, string> }>();
  let snippet: Snippet;
  let fast: Snippet;
  /** for visits that must be served: a loaded 2-core machine can take over a second for a cold pick */
  let patient: Snippet;
  /** for failures that answer at once: a timeout they finish well inside */
  let steady: Snippet;
  const figures: Record<string, number | string> = {};

  const api = async (method: string, path: string, body?: unknown, headers: Record<string, string> = { Authorization: "" }) => {
    const response = await fetch(`${fw.url}/api/v1${path}`, {
      method, body: body === undefined ? undefined : JSON.stringify(body),
      headers: { "Content-Type": "application/json", ...headers, ...(headers.Authorization === "" ? { Authorization: `Bearer ${fw.token}` } : {}) },
    });
    return { status: response.status, body: await response.json() };
  };
  const serve = (path: string, head: string, headers?: Record<string, string>, body = BODY) => {
    routes.set(path, { html: `<!doctype html><html><head><meta charset="utf-8">${head}</head><body>${body}</body></html>`, headers });
    return `http://127.0.0.1:${landingPort}${path}`;
  };
  const contexts: BrowserContext[] = [];
  const newContext = async (options: BrowserContextOptions = {}) => {
    const context = await browser.newContext(options);
    contexts.push(context);
    await context.addInitScript(() => {
      document.addEventListener("facetwise:ready", (e) => {
        (window as unknown as { __ready: unknown }).__ready = { t: performance.now(), ...(e as CustomEvent).detail };
      });
    });
    return context;
  };
  const errorsOf = new WeakMap<Page, string[]>();
  const visit = async (context: BrowserContext, url: string) => {
    const page = await context.newPage();
    const errors: string[] = [];
    page.on("pageerror", (error) => errors.push(error.message));
    errorsOf.set(page, errors);
    await page.goto(url);
    return page;
  };
  // polled with evaluate: waitForFunction compiles its predicate in the page, which a strict CSP refuses
  const ready = async (page: Page): Promise<Ready> => {
    await expect.poll(() => page.evaluate(() => Boolean((window as unknown as { __ready?: unknown }).__ready)), { timeout: 10_000 }).toBe(true);
    return page.evaluate(() => (window as unknown as { __ready: Ready }).__ready);
  };
  const hiddenMarked = (page: Page) => page.evaluate(() =>
    [...document.querySelectorAll("[data-facet]")].filter((el) => getComputedStyle(el).visibility !== "visible").length);
  const headline = (page: Page) => page.textContent("h1");
  /** The page's own content shows, nothing marked stays hidden, nothing was thrown into the page. */
  const failedOpen = async (page: Page, state: Ready) => {
    expect(state.applied).toBe(false);
    expect(await hiddenMarked(page)).toBe(0);
    expect(await headline(page)).toBe(OWN_HEADLINE);
    expect(await page.textContent("#layout")).toBe("Own layout");
    expect(errorsOf.get(page)).toEqual([]);
  };

  /**
   * Passes the context's outcome requests on to facetwise and records what was sent and answered
   * (keepalive fetches and beacons are not reported as the page's responses, so they are routed).
   * `refuse(n)` may answer the n-th request itself instead (0-based).
   */
  const recordOutcomes = async (context: BrowserContext, refuse: (n: number, route: Route) => Promise<void> | null = () => null) => {
    const log: { sent: { pick?: string; event?: string }; status: number; answer: { counted?: boolean; duplicate?: boolean } }[] = [];
    let n = 0;
    await context.route((url) => url.pathname.endsWith("/outcomes"), async (route) => {
      const refused = refuse(n++, route);
      if (refused) return refused;
      const response = await route.fetch();
      const answer = await response.json();
      log.push({ sent: JSON.parse(route.request().postData() ?? "{}"), status: response.status(), answer });
      await route.fulfill({ response, json: answer });
    });
    return log;
  };

  beforeAll(async () => {
    fw = await startServer();
    landing = createServer((req, res) => {
      const found = routes.get((req.url ?? "").split("?")[0]);
      if (!found) return void res.writeHead(404).end("not here");
      res.writeHead(200, { "Content-Type": "text/html; charset=utf-8", "Cache-Control": "no-store", ...found.headers }).end(found.html);
    });
    await new Promise<void>((resolve) => landing.listen(0, "127.0.0.1", resolve));
    landingPort = (landing.address() as AddressInfo).port;
    const created = await api("POST", "/pages", {
      key: KEY, name: "Client test </script>\u2028",
      factors: [
        { name: "headline", levels: [{ name: "script", value: SCRIPT_VALUE }, { name: "separators", value: SEPARATOR_VALUE }] },
        { name: "layout", levels: [{ name: "single" }, { name: "split" }] },
        { name: "cta", levels: [{ name: "red", value: "rgb(200, 0, 0)" }, { name: "blue", value: "rgb(0, 0, 200)" }] },
        { name: WEIRD_FACTOR, levels: [{ name: "on", value: "weird on" }, { name: "off", value: "weird off" }] },
      ],
      segmentBy: ["campaign", "device"],
    });
    expect(created.status, JSON.stringify(created.body)).toBe(201);
    snippet = (await api("GET", `/pages/${KEY}/snippet`)).body;
    fast = (await api("GET", `/pages/${KEY}/snippet?timeout=600`)).body;
    patient = (await api("GET", `/pages/${KEY}/snippet?timeout=8000`)).body;
    steady = (await api("GET", `/pages/${KEY}/snippet?timeout=3000`)).body;
    const { chromium } = await import("playwright-core");
    browser = await chromium.launch({
      executablePath: CHROMIUM, headless: true,
      args: ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--no-first-run", "--disable-quic", "--disable-sync", "--host-resolver-rules=MAP landing.test 127.0.0.1"],
    });
  }, 180_000);

  afterAll(async () => {
    for (const context of contexts) await context.close().catch(() => undefined);
    await browser?.close();
    await new Promise((r) => (landing ? landing.close(r) : r(null)));
    await fw?.stop();
    console.log(`client figures: ${JSON.stringify(figures)}`);
  }, 30_000);

  it("serves the client immutable, gzipped, readable cross-origin, with the SRI hash the snippet names", async () => {
    for (const [file, form] of [["v1.js", "classic"], ["v1.mjs", "module"]]) {
      const response = await fetch(`${fw.url}/client/${file}`, { headers: { "Accept-Encoding": "gzip" } });
      expect(response.status).toBe(200);
      expect(response.headers.get("cache-control")).toBe("public, max-age=31536000, immutable");
      expect(response.headers.get("content-encoding")).toBe("gzip");
      expect(response.headers.get("access-control-allow-origin")).toBe("*");
      expect(response.headers.get("content-type")).toMatch(/^text\/javascript/);
      const gzipped = Number(response.headers.get("content-length")); // as sent; fetch decodes the body
      const bytes = Buffer.from(await response.arrayBuffer());
      figures[`${form} bytes`] = bytes.length;
      figures[`${form} gzip bytes`] = gzipped;
      // W3C Subresource Integrity §3.1: "sha384-" + base64(SHA-384(body)), computed here by node:crypto
      if (form === "classic") expect(snippet.integrity).toBe(`sha384-${createHash("sha384").update(bytes).digest("base64")}`);
    }
    expect(snippet.html).toContain(`integrity="${snippet.integrity}"`);
  });

  it("the snippet escapes names: one script element, the context keys arrive exactly, nothing else is created", async () => {
    const weird = (await api("GET", `/pages/${KEY}/snippet?timeout=8000&context=campaign&context=${encodeURIComponent(WEIRD_KEY)}`)).body as Snippet;
    for (const html of [snippet.html, weird.html]) {
      expect(html).not.toMatch(/[\u2028\u2029]/);
      expect(html.split("</script>").length).toBe(2);
    }
    const context = await newContext();
    const query = `?utm_campaign=Spring&${encodeURIComponent(WEIRD_KEY)}=Odd%20%20Value`;
    const page = await visit(context, serve("/escape", weird.html, undefined, `${BODY}<i id="after">after</i>`) + query);
    const state = await ready(page);
    expect(state.applied).toBe(true);
    const parsed = await page.evaluate(() => ({
      scripts: document.scripts.length, styles: document.querySelectorAll("style").length,
      page: (document.scripts[0] as HTMLScriptElement).dataset.page,
      context: (window as unknown as { facetwise: { context: object } }).facetwise.context,
      after: document.getElementById("after")?.textContent,
      pwned: (window as unknown as { __pwned?: number }).__pwned,
    }));
    expect(parsed).toEqual({ scripts: 1, styles: 1, page: KEY, context: { campaign: "Spring", [WEIRD_KEY]: "Odd  Value" }, after: "after", pwned: undefined });
  });

  it("renders values as text, attributes and styles; a level without a value only marks the element; sticky across reloads", async () => {
    const context = await newContext();
    const url = serve("/main", patient.html);
    const page = await visit(context, url);
    const first = await ready(page);
    expect(first.applied).toBe(true);
    const rendered = await page.evaluate(() => {
      const layout = document.getElementById("layout") as HTMLElement;
      return {
        headline: document.querySelector("h1")?.textContent, headlineLevel: document.querySelector("h1")?.getAttribute("data-facet-level"),
        layoutText: layout.textContent, layoutLevel: layout.dataset.facetLevel, layoutClass: layout.className,
        cta: getComputedStyle(document.getElementById("cta") as HTMLElement).backgroundColor,
        ctaText: document.getElementById("cta")?.textContent,
        weird: document.getElementById("weird")?.textContent,
        bodyScripts: document.querySelectorAll("body script").length,
        pwned: (window as unknown as { __pwned?: number }).__pwned,
      };
    });
    expect([SCRIPT_VALUE, SEPARATOR_VALUE]).toContain(rendered.headline);
    expect(rendered.headline).toBe(rendered.headlineLevel === "script" ? SCRIPT_VALUE : SEPARATOR_VALUE);
    expect(rendered.layoutText).toBe("Own layout");
    expect(["single", "split"]).toContain(rendered.layoutLevel);
    expect(rendered.layoutClass).toBe(`facet-layout-${rendered.layoutLevel}`);
    expect(["rgb(200, 0, 0)", "rgb(0, 0, 200)"]).toContain(rendered.cta);
    expect(rendered.ctaText).toBe("Own button");
    expect(["weird on", "weird off"]).toContain(rendered.weird);
    expect(rendered.bodyScripts).toBe(0);
    expect(rendered.pwned).toBeUndefined();
    expect(errorsOf.get(page)).toEqual([]);

    await page.reload();
    const again = await ready(page);
    expect(again.pick).toBe(first.pick);
    expect(await headline(page)).toBe(rendered.headline);
    const other = await visit(context, url);
    expect((await ready(other)).pick).toBe(first.pick);
  });

  it("measures time to content on cold and warm visits, and the bytes shipped", async () => {
    const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
    const cold: number[] = [];
    const warm: number[] = [];
    let shipped = "";
    for (let i = 0; i < 5; i++) {
      const context = await newContext(); // empty cache, new visitor
      const pickSizes = context.waitForEvent("requestfinished", (r) => r.url().includes("/picks")).then((r) => r.sizes());
      const page = await visit(context, serve("/timing", patient.html));
      const first = await ready(page);
      const sizes = await pickSizes;
      if (i === 0) figures["pick request/response bytes (headers + body)"] = `${sizes.requestHeadersSize + sizes.requestBodySize}/${sizes.responseHeadersSize + sizes.responseBodySize}`;
      expect(first.applied).toBe(true);
      cold.push(first.t);
      const entries = await page.evaluate(() => performance.getEntriesByType("resource").map((e) => {
        const r = e as PerformanceResourceTiming;
        return { name: r.name.includes("/picks") ? "pick" : r.name.includes("/client/") ? "client" : "other", transfer: r.transferSize, body: r.encodedBodySize };
      }));
      if (i === 0) shipped = entries.filter((e) => e.name === "client").map((e) => `${e.name} ${e.transfer} transferred (${e.body} body)`).join(", ");
      await page.reload(); // client from the browser cache, sticky pick
      warm.push((await ready(page)).t);
      await context.close();
    }
    figures["time to content cold, median of 5 (ms)"] = Math.round(median(cold));
    figures["cold max (ms)"] = Math.round(Math.max(...cold));
    figures["time to content warm, median of 5 (ms)"] = Math.round(median(warm));
    figures["warm max (ms)"] = Math.round(Math.max(...warm));
    figures["first visit bytes"] = shipped;
  });

  it("sends UTM and device context; the server normalises it into one campaign and shows raw → normalised in the report", async () => {
    const segments: string[] = [];
    for (const [query, options] of [["?utm_campaign=Spring%20Sale", {}], ["?utm_campaign=spring-sale%20", {}], ["?campaign=SPRING_sale", { userAgent: IPHONE, viewport: { width: 390, height: 844 } }]] as const) {
      const context = await newContext(options);
      const page = await context.newPage();
      const [response] = await Promise.all([page.waitForResponse((r) => r.url().includes("/picks")), page.goto(serve("/utm", patient.html) + query)]);
      segments.push(((await response.json()) as { segment: string }).segment);
      expect((await ready(page)).applied).toBe(true);
    }
    expect(segments[0]).toBe(`campaign=spring-sale|device=desktop`);
    expect(segments[1]).toBe(segments[0]);
    expect(segments[2]).toBe(`campaign=spring-sale|device=phone`);
    const report = await api("GET", `/pages/${KEY}/report`);
    const campaigns = (report.body.contextValues.campaign as { raw: string; normalized: string }[]);
    expect(campaigns).toContainEqual(expect.objectContaining({ raw: "Spring Sale", normalized: "spring-sale" }));
    expect(campaigns).toContainEqual(expect.objectContaining({ raw: "spring-sale ", normalized: "spring-sale" }));
  });

  // failure modes: each a fresh visitor; the page's own content must show by the timeout
  const failures: { name: string; route?: (route: Route, page: () => Page) => Promise<void> | void; client?: true; init?: () => void; timeoutMs: number; reason: string }[] = [
    { name: "a hung server (default 1,000 ms timeout)", route: () => undefined, timeoutMs: 1000, reason: "timeout" },
    { name: "a slow server (600 ms timeout)", route: (r) => new Promise((done) => setTimeout(() => done(r.continue().catch(() => undefined)), 2000)), timeoutMs: 600, reason: "timeout" },
    { name: "a 500", route: (r) => r.fulfill({ status: 500, contentType: "application/json", body: '{"error":{"code":"INTERNAL"}}' }), timeoutMs: 3000, reason: "error" },
    { name: "a 404 for an unknown page key", route: (r) => r.fulfill({ status: 404, contentType: "application/json", body: "{}" }), timeoutMs: 3000, reason: "error" },
    { name: "the network down", route: (r) => r.abort("connectionrefused"), timeoutMs: 3000, reason: "error" },
    { name: "malformed JSON", route: (r) => r.fulfill({ status: 200, contentType: "application/json", body: '{"pick": "x", "combination": ' }), timeoutMs: 3000, reason: "error" },
    {
      name: "an answer that makes the client throw", timeoutMs: 3000, reason: "error",
      route: (r) => r.fulfill({ status: 200, contentType: "application/json", body: '{"pick":"p","combination":{"layout":{"level":"split","value":""},"headline":null}}' }),
    },
    {
      name: "an answer without a combination", timeoutMs: 3000, reason: "error",
      route: (r) => r.fulfill({ status: 200, contentType: "application/json", body: '{"pick":"p"}' }),
    },
    { name: "no fetch", init: () => { delete (window as { fetch?: unknown }).fetch; }, timeoutMs: 3000, reason: "unsupported" },
  ];
  for (const failure of failures) {
    it(`fails open on ${failure.name}`, async () => {
      const context = await newContext();
      let hiddenWhileWaiting = -1;
      let current: Page | undefined;
      if (failure.route) {
        await context.route((url) => url.pathname.endsWith("/picks"), async (route) => {
          await new Promise((r) => setTimeout(r, 100)); // let the body be parsed
          if (current) hiddenWhileWaiting = await hiddenMarked(current);
          await failure.route?.(route, () => current as Page);
        });
      }
      if (failure.init) await context.addInitScript(failure.init);
      current = await context.newPage();
      const errors: string[] = [];
      current.on("pageerror", (error) => errors.push(error.message));
      errorsOf.set(current, errors);
      await current.goto(serve("/fail", ({ 1000: snippet, 600: fast, 3000: steady } as Record<number, Snippet>)[failure.timeoutMs].html));
      const state = await ready(current);
      expect(state.reason).toBe(failure.reason);
      await failedOpen(current, state);
      // common practice, no source: a margin of 1 s over the timeout for a loaded 2-core machine
      expect(state.t).toBeLessThan(failure.timeoutMs + 1000);
      // the marked elements waited hidden (no flicker); with 600 ms a loaded machine may already be past it
      if (failure.route && failure.timeoutMs >= 1000) expect(hiddenWhileWaiting).toBe(4);
    });
  }

  it("fails open when the client script itself hangs: the snippet's CSS reveals the content at the timeout", async () => {
    const context = await newContext();
    await context.route((url) => url.pathname.endsWith("/client/v1.js"), () => undefined);
    const page = await context.newPage();
    // a pending async script holds the load event back, not the rendering
    await page.goto(serve("/hung-script", fast.html), { waitUntil: "domcontentloaded" });
    expect(await hiddenMarked(page)).toBe(4);
    await page.waitForTimeout(1200);
    expect(await hiddenMarked(page)).toBe(0);
    expect(await headline(page)).toBe(OWN_HEADLINE);
  });

  it("applies nothing that arrives after the timeout (no flicker after the page showed)", async () => {
    const context = await newContext();
    let released = false;
    await context.route((url) => url.pathname.endsWith("/picks"), async (route) => {
      await new Promise((r) => setTimeout(r, 1500));
      const response = await route.fetch().catch(() => null);
      released = true;
      await route.fulfill(response ? { response } : { status: 200, body: "{}" }).catch(() => undefined);
    });
    const page = await visit(context, serve("/late", fast.html));
    const state = await ready(page);
    expect(state.reason).toBe("timeout");
    await expect.poll(() => released, { timeout: 5000 }).toBe(true);
    await page.waitForTimeout(300);
    await failedOpen(page, state);
    expect(await page.getAttribute("h1", "data-facet-level")).toBeNull();
  });

  const stillWorks: { name: string; init?: () => void; host?: string; check?: string }[] = [
    {
      name: "storage that throws on access",
      init: () => Object.defineProperty(window, "localStorage", { get() { throw new DOMException("The operation is insecure.", "SecurityError"); } }),
    },
    { name: "storage that throws on write", init: () => { Storage.prototype.setItem = () => { throw new DOMException("full", "QuotaExceededError"); }; } },
    { name: "a missing crypto.randomUUID", init: () => { delete (Crypto.prototype as { randomUUID?: unknown }).randomUUID; } },
    { name: "a non-secure origin (http://landing.test, no randomUUID)", host: "landing.test", check: "!isSecureContext && typeof crypto.randomUUID === 'undefined'" },
  ];
  for (const variant of stillWorks) {
    it(`still picks and renders with ${variant.name}`, async () => {
      const context = await newContext();
      if (variant.init) await context.addInitScript(variant.init);
      const url = serve("/degraded", patient.html).replace("127.0.0.1", variant.host ?? "127.0.0.1");
      const page = await visit(context, url);
      if (variant.check) expect(await page.evaluate(variant.check)).toBe(true);
      const state = await ready(page);
      expect(state.applied, JSON.stringify(state)).toBe(true);
      expect(await hiddenMarked(page)).toBe(0);
      expect([SCRIPT_VALUE, SEPARATOR_VALUE]).toContain(await headline(page));
      expect(errorsOf.get(page)).toEqual([]);
    });
  }

  it("works under a strict Content-Security-Policy: without the style hash it cannot hide (content shows, then the pick); with it, it hides", async () => {
    for (const withHash of [false, true]) {
      const context = await newContext();
      const csp = `default-src 'none'; script-src ${fw.url}; connect-src ${fw.url}${withHash ? `; ${patient.csp.split("; ").find((p) => p.startsWith("style-src"))}` : ""}`;
      let hiddenWhileWaiting = -1;
      let current: Page | undefined;
      await context.route((url) => url.pathname.endsWith("/picks"), async (route) => {
        await new Promise((r) => setTimeout(r, 100)); // let the body be parsed
        if (current) hiddenWhileWaiting = await hiddenMarked(current);
        await route.continue();
      });
      current = await context.newPage();
      const violations: string[] = [];
      await current.exposeFunction("__violation", (d: string) => violations.push(d));
      await current.addInitScript(() => document.addEventListener("securitypolicyviolation", (e) => (window as unknown as { __violation(d: string): void }).__violation(e.violatedDirective)));
      const errors: string[] = [];
      current.on("pageerror", (error) => errors.push(error.message));
      errorsOf.set(current, errors);
      await current.goto(serve(`/csp-${withHash}`, patient.html, { "Content-Security-Policy": csp }));
      const state = await ready(current);
      expect(state.applied).toBe(true);
      expect(await hiddenMarked(current)).toBe(0);
      expect(errors).toEqual([]);
      expect(hiddenWhileWaiting).toBe(withHash ? 4 : 0);
      if (!withHash) await expect.poll(() => violations.some((v) => v.startsWith("style-src"))).toBe(true);
      else expect(violations).toEqual([]);
    }
  });

  it("a conversion answered 503 is retried and counted once", async () => {
    const context = await newContext();
    const page = await visit(context, serve("/convert", patient.html));
    expect((await ready(page)).applied).toBe(true);
    let refused = 0;
    const before = (await api("GET", `/pages/${KEY}`)).body.totals.conversions as number;
    const log = await recordOutcomes(context, (n, route) => n === 0 ? (refused++, route.fulfill({ status: 503, contentType: "application/json", body: '{"error":{"code":"DATABASE_UNAVAILABLE"}}' })) : null);
    expect(await page.evaluate(() => (window as unknown as { facetwise: { convert(c: object): Promise<boolean> } }).facetwise.convert({ event: "order-503", value: 12.5 }))).toBe(true);
    await expect.poll(() => log.length, { timeout: 10_000 }).toBeGreaterThan(0);
    expect(refused).toBe(1);
    expect(log[0]).toMatchObject({ sent: { event: "order-503", value: 12.5 }, status: 202, answer: { counted: true } });
    await page.waitForTimeout(500);
    expect(log.filter((a) => a.answer.counted).length).toBe(1);
    expect((await api("GET", `/pages/${KEY}`)).body.totals.conversions).toBe(before + 1);
    expect(await page.evaluate(() => localStorage.getItem("facetwise:queue"))).toBeNull();
  });

  it("a conversion on a later page of the site counts against the landing page's pick; one made while offline is sent from storage", async () => {
    const thanks = snippet.html.replace(" data-timeout=", ' data-pick="no" data-timeout=');
    const context = await newContext();
    const page = await visit(context, serve("/landing", patient.html));
    const landed = await ready(page);
    expect(landed.applied).toBe(true);
    // offline on the landing page: the conversion stays queued in storage. The count is read while
    // still offline: a backoff retry may deliver the conversion as soon as the network is back.
    let offline = true;
    const log = await recordOutcomes(context, (_, route) => (offline ? route.abort("internetdisconnected") : null));
    await page.evaluate(() => (window as unknown as { facetwise: { convert(c: object): Promise<boolean> } }).facetwise.convert({ event: "order-offline", value: 30 }));
    await expect.poll(() => page.evaluate(() => JSON.parse(localStorage.getItem("facetwise:queue") ?? "[]").length)).toBe(1);
    const before = (await api("GET", `/pages/${KEY}`)).body.totals.conversions as number;
    offline = false;
    await page.goto(serve("/thanks", thanks, undefined, "<p>Thank you</p>"));
    const there = await ready(page);
    expect(there.reason).toBe("no pick");
    await expect.poll(() => log.length, { timeout: 10_000 }).toBeGreaterThan(0);
    // the beacon sent as the landing page was left may have arrived first (beacons bypass routing): one conversion either way
    expect(log[0]).toMatchObject({ sent: { pick: landed.pick, event: "order-offline" }, status: 202 });
    await expect.poll(async () => (await api("GET", `/pages/${KEY}`)).body.totals.conversions).toBe(before + 1);
    await expect.poll(() => page.evaluate(() => localStorage.getItem("facetwise:queue"))).toBeNull();
    // a second conversion from the thank-you page: the same pick, which has already converted
    await page.evaluate(() => (window as unknown as { facetwise: { convert(c: object): Promise<boolean> } }).facetwise.convert({ event: "order-offline" }));
    await expect.poll(() => log.length).toBeGreaterThan(1);
    expect(log.filter((l) => l.answer.counted).length).toBeLessThanOrEqual(1);
    expect((await api("GET", `/pages/${KEY}`)).body.totals.conversions).toBe(before + 1);
    expect(log[log.length - 1]).toMatchObject({ answer: { duplicate: true, counted: false } });
  });

  it("consent: false keeps nothing in storage; consent(true) keeps the visitor, so the next visit is sticky", async () => {
    const noConsent = (await api("GET", `/pages/${KEY}/snippet?timeout=8000&consent=false`)).body as Snippet;
    expect(noConsent.html).toContain('data-consent="false"');
    const context = await newContext();
    const page = await visit(context, serve("/consent", noConsent.html));
    const first = await ready(page);
    expect(first.applied).toBe(true);
    expect(await page.evaluate(() => Object.keys(localStorage).length + document.cookie.length + sessionStorage.length)).toBe(0);
    await page.evaluate(() => (window as unknown as { facetwise: { consent(b: boolean): void } }).facetwise.consent(true));
    expect((await page.evaluate(() => Object.keys(localStorage))).sort()).toEqual([`facetwise:pick:${"client-test"}`, "facetwise:visitor"]);
    await page.goto(serve("/consented", patient.html));
    expect((await ready(page)).pick).toBe(first.pick);
    await page.evaluate(() => (window as unknown as { facetwise: { consent(b: boolean): void } }).facetwise.consent(false));
    expect(await page.evaluate(() => Object.keys(localStorage).length)).toBe(0);
  });

  it("the outcome route refuses a value that is not a finite non-negative number, naming the field", async () => {
    const context = await newContext();
    const page = await visit(context, serve("/value", patient.html));
    const { pick } = await ready(page);
    const publicKey = /data-key="([^"]+)"/.exec(snippet.html)?.[1] ?? "";
    for (const value of [-1, "12", null]) {
      const answer = await api("POST", `/pages/${KEY}/outcomes`, { pick, value }, { "X-Page-Key": publicKey });
      expect(answer.status).toBe(400);
      expect(answer.body.error.field).toBe("value");
    }
    expect((await api("POST", `/pages/${KEY}/outcomes`, { pick, value: 0 }, { "X-Page-Key": publicKey })).status).toBe(202);
  });

  it("the demo landing page uses the client under its strict CSP, its images exist, and its thank-you page converts", async () => {
    const context = await newContext();
    const violations: string[] = [];
    const page = await context.newPage();
    await page.exposeFunction("__violation", (d: string) => violations.push(d));
    await page.addInitScript(() => document.addEventListener("securitypolicyviolation", (e) => (window as unknown as { __violation(d: string): void }).__violation(`${e.violatedDirective} ${e.blockedURI}`)));
    await page.goto(`${fw.url}/demo/landing?utm_source=Search&timeout=8000`);
    const state = await ready(page);
    expect(state.applied).toBe(true);
    expect(await page.evaluate(() => (document.querySelector("img") as HTMLImageElement).src)).toMatch(/\/demo\/hero-[a-z-]+\.svg$/);
    await expect.poll(() => page.evaluate(() => (document.querySelector("img") as HTMLImageElement).complete)).toBe(true);
    expect(await page.evaluate(() => (document.querySelector("img") as HTMLImageElement).naturalWidth)).toBe(640);
    const log = await recordOutcomes(context);
    await page.click("button[data-facet=cta]");
    await expect.poll(() => log.length, { timeout: 10_000 }).toBeGreaterThan(0);
    expect(log[0]).toMatchObject({ sent: { pick: state.pick, value: 39 }, status: 202, answer: { accepted: true, counted: true } });
    expect(violations).toEqual([]);
  });
});
