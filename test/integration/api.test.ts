/**
 * Each route of the API end to end, on every database target. Expected statuses and headers
 * follow HTTP semantics (RFC 9110: 201 Created, 202 Accepted, 404, 503 + Retry-After), CORS per
 * the WHATWG Fetch standard (preflight = OPTIONS with Access-Control-Request-*), CSV per RFC 4180.
 */
import { describe, expect, it } from "vitest";
import { parseSettings } from "../../src/model/index.ts";
import { forEachDatabase } from "../support/databases.ts";
import { useHarness, testPage } from "./harness.ts";

forEachDatabase("API routes", (open) => {
  const h = useHarness(open);
  let page: { key: string; publicKey: string };

  it("answers health and readiness", async () => {
    expect((await h.call("GET", "/healthz")).body).toEqual({ ok: true });
    const ready = await h.call("GET", "/readyz");
    expect(ready.status).toBe(200);
    expect(ready.body.ready).toBe(true);
  });

  it("checks a token with GET /session", async () => {
    const r = await h.admin("GET", "/session");
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ ok: true, scope: "admin" });
    // the defaults the console shows are the engine's own (one source, no copies in the console)
    expect(r.body.defaultSettings).toEqual(parseSettings({}));
  });

  it("checks a definition without saving it", async () => {
    const def = testPage("unused");
    const r = await h.admin("POST", "/definitions/check", { factors: def.factors, exclude: def.exclude });
    expect(r.status).toBe(200);
    // 2 × 3 × 2 = 12 combinations; the rule {photo: rider, button: call} removes 2 × 1 × 1 = 2
    expect(r.body.combinations).toEqual({ total: 12, allowed: 10, excluded: 2 });
    // one-hot main effects (1 + 1 + 2 + 1) and all three pairs (1·2 + 1·1 + 2·1): 5 + 5 = 10
    expect(r.body.dimension).toBe(10);
    expect(await h.count("page")).toBe(0);
  });

  it("checks a whole create body (key, name, segmentBy, settings) without saving it", async () => {
    const r = await h.admin("POST", "/definitions/check", testPage("unused", { settings: { baselineShare: 0.1 } }));
    expect(r.status).toBe(200);
    // the same page as above: 12 combinations, 2 excluded, 10 coefficients
    expect(r.body).toMatchObject({ combinations: { total: 12, allowed: 10, excluded: 2 }, dimension: 10 });
    expect(await h.count("page")).toBe(0);
  });

  it("creates a page (201) with its public key, lists and reads it", async () => {
    const created = await h.admin("POST", "/pages", testPage("repair-landing"));
    expect(created.status).toBe(201);
    expect(created.body.publicKey).toMatch(/^pk_/);
    expect(created.body).toMatchObject({
      key: "repair-landing", status: "active", demo: false, segmentBy: ["source"],
      baseline: "title=short|photo=shop|button=book", combinations: { total: 12, allowed: 10, excluded: 2 }, modelVersion: 1,
    });
    expect(created.body.settings.attributionWindowHours).toBe(24);
    page = { key: created.body.key, publicKey: created.body.publicKey };
    const list = await h.admin("GET", "/pages");
    expect(list.body.pages.map((p: { key: string }) => p.key)).toEqual(["repair-landing"]);
    const one = await h.admin("GET", "/pages/repair-landing");
    expect(one.body.factors[1].levels.map((l: { name: string }) => l.name)).toEqual(["shop", "tools", "rider"]);
  });

  it("refuses a second page with the same key (409) and writes nothing", async () => {
    const r = await h.admin("POST", "/pages", testPage("repair-landing"));
    expect(r.status).toBe(409);
    expect(r.body.error.code).toBe("PAGE_EXISTS");
    expect(await h.count("page")).toBe(1);
  });

  it("serves a pick with level values, segment and propensity, sticky for the visitor", async () => {
    const first = await h.pick(page, "visitor-1", { source: "search" });
    expect(first.status).toBe(200);
    expect(first.body.segment).toBe("source=search");
    expect(first.body.propensity).toBeGreaterThan(0);
    expect(first.body.propensity).toBeLessThanOrEqual(1);
    expect(Object.keys(first.body.combination)).toEqual(["title", "photo", "button"]);
    const levels = first.body.combination;
    expect(first.body.key).toBe(`title=${levels.title.level}|photo=${levels.photo.level}|button=${levels.button.level}`);
    expect(first.body.key).not.toMatch(/photo=rider\|button=call/);
    expect(first.body.sticky).toBe(false);
    for (let i = 0; i < 5; i++) {
      const again = await h.pick(page, "visitor-1", { source: "social" });
      expect(again.body.pick).toBe(first.body.pick);
      expect(again.body.key).toBe(first.body.key);
      expect(again.body.sticky).toBe(true);
    }
  });

  it("gives concurrent first visits of one visitor one and the same pick", async () => {
    const replies = await Promise.all(Array.from({ length: 20 }, () => h.pick(page, "visitor-race", { source: "search" })));
    expect(new Set(replies.map((r) => r.body.pick)).size).toBe(1);
    const { rows } = await h.db.pool.query("SELECT count(*)::int AS n FROM pick WHERE visitor = 'visitor-race'");
    expect(rows[0].n).toBe(1);
  });

  it("gives a new pick once the assignment has expired", async () => {
    const first = await h.pick(page, "visitor-expiring", { source: "search" });
    await h.db.pool.query("UPDATE assignment SET expires_at = now() - interval '1 second' WHERE visitor = 'visitor-expiring'");
    const second = await h.pick(page, "visitor-expiring", { source: "search" });
    expect(second.body.pick).not.toBe(first.body.pick);
    expect(second.body.sticky).toBe(false);
  });

  it("accepts an outcome (202) and a repeated event id only once", async () => {
    const pick = (await h.pick(page, "visitor-2", { source: "search" })).body.pick;
    const first = await h.outcome(page, { pick, event: "order-77", value: 49 });
    expect(first.status).toBe(202);
    expect(first.body).toEqual({ accepted: true, duplicate: false, counted: true });
    const again = await h.outcome(page, { pick, event: "order-77", value: 49 });
    expect(again.status).toBe(202);
    expect(again.body.duplicate).toBe(true);
    expect(again.body.counted).toBe(false);
    const { rows } = await h.db.pool.query("SELECT count(*)::int AS n FROM outcome WHERE event = 'order-77'");
    expect(rows[0].n).toBe(1);
    const other = await h.outcome(page, { pick, event: "order-78" });
    expect(other.body).toMatchObject({ counted: false, duplicate: false });
    expect(other.body.reason).toMatch(/already converted/);
  });

  it("answers CORS preflight on public routes only", async () => {
    const pre = await h.call("OPTIONS", `/api/v1/pages/${page.key}/picks`, {
      headers: { origin: "https://landing.example", "access-control-request-method": "POST", "access-control-request-headers": "content-type,x-page-key" },
    });
    expect(pre.status).toBe(204);
    expect(pre.headers.get("access-control-allow-origin")).toBe("*");
    expect(pre.headers.get("access-control-allow-headers")).toMatch(/X-Page-Key/i);
    const pick = await h.pick(page, "visitor-cors");
    expect(pick.headers.get("access-control-allow-origin")).toBe("*");
    const report = await h.admin("GET", `/pages/${page.key}/report`);
    expect(report.headers.get("access-control-allow-origin")).toBeNull();
  });

  it("accepts an outcome sent as text/plain (navigator.sendBeacon)", async () => {
    const pick = (await h.pick(page, "visitor-beacon", { source: "social" })).body.pick;
    // a beacon can set neither headers nor a JSON content type: the key rides in the query
    const r = await h.call("POST", `/api/v1/pages/${page.key}/outcomes?pageKey=${page.publicKey}`, {
      raw: JSON.stringify({ pick, event: "beacon-1" }), headers: { "content-type": "text/plain;charset=UTF-8" },
    });
    expect(r.status).toBe(202);
    expect(r.body.counted).toBe(true);
  });

  it("reports per segment and pooled after a fold", async () => {
    const pageId = (await h.db.pool.query("SELECT id FROM page WHERE key = $1", [page.key])).rows[0].id;
    const fold = await h.server.services.folds.foldPage(pageId, true);
    expect(fold).toMatchObject({ folded: true, version: 2 });
    const r = await h.admin("GET", `/pages/${page.key}/report`);
    expect(r.status).toBe(200);
    const visitors = await h.count("pick");
    expect(r.body.totals.visitors).toBe(visitors);
    expect(r.body.pooled.segment).toBe("*");
    expect(r.body.pooled.visitors).toBe(visitors);
    const search = r.body.segments.find((s: { segment: string }) => s.segment === "source=search");
    expect(search.context).toEqual({ source: "search" });
    expect(["exploring", "settled"]).toContain(search.status);
    // the probability of being best with its Monte-Carlo error: binomial standard error of its draws, Wilson bounds around it
    const pb = search.leader.probabilityBest;
    const mc = search.leader.probabilityBestError;
    expect(mc.standardError).toBeCloseTo(Math.sqrt((pb * (1 - pb)) / mc.draws), 12);
    expect(mc.lower).toBeLessThanOrEqual(pb);
    expect(mc.upper).toBeGreaterThan(0);
    expect(search.expectedLossError).toBeGreaterThanOrEqual(0);
    expect(search.leader.rate.lower).toBeLessThanOrEqual(search.leader.rate.mean);
    expect(search.leader.rate.mean).toBeLessThanOrEqual(search.leader.rate.upper);
    expect(search.leader.levels.title.value).toMatch(/repairs/);
    expect(search.effects.map((e: { factor: string }) => e.factor)).toEqual(["title", "photo", "button"]);
    const level = search.effects[0].levels[0];
    expect(level.difference.lower).toBeLessThanOrEqual(level.difference.mean);
    expect(level.difference.mean).toBeLessThanOrEqual(level.difference.upper);
    expect(level.contexts).toBeGreaterThan(0);
    expect(level.oddsRatioAtFirstLevels.estimate).toBeGreaterThan(0);
    // the learned spread lies on the grid: a quarter to four times the setting (spreadSearch.ts)
    expect(search.segmentSpread).toBeGreaterThanOrEqual(0.25 * r.body.settings.segmentSpread - 1e-12);
    expect(search.segmentSpread).toBeLessThanOrEqual(4 * r.body.settings.segmentSpread + 1e-12);
    const shares = Object.values(search.allocation as Record<string, number>).reduce((a, b) => a + b, 0);
    expect(shares).toBeGreaterThan(0.99);
    expect(shares).toBeLessThan(1.0001);
    expect(r.body.allocationHistory["*"].length).toBe(2);
  });

  it("counts each listed page's settled segments, leaving out the pooled model", async () => {
    // a leader's probability of being best is at least 1/K among K allowed combinations (here
    // 1/10), so with settleProbability 0.01 every segment settles at its first fold
    const created = await h.admin("POST", "/pages", testPage("settles-at-once", { settings: { settleProbability: 0.01 } }));
    const listed = async () => (await h.admin("GET", "/pages")).body.pages.find((p: { key: string }) => p.key === "settles-at-once").totals;
    // only the pooled model "*" has a summary yet, and it is not a segment
    expect(await listed()).toMatchObject({ segments: 0, settled: 0 });
    for (const [i, source] of ["search", "social", "social"].entries()) await h.pick(created.body, `settle-${i}`, { source });
    const pageId = (await h.db.pool.query("SELECT id FROM page WHERE key = $1", ["settles-at-once"])).rows[0].id;
    await h.server.services.folds.foldPage(pageId, true);
    expect(await listed()).toMatchObject({ segments: 2, settled: 2 });
  });

  it("exports JSON and RFC 4180 CSV", async () => {
    const json = await h.admin("GET", `/pages/${page.key}/export?format=json`);
    expect(json.status).toBe(200);
    const pooled = json.body.segments.find((s: { segment: string }) => s.segment === "*");
    expect(Object.keys(pooled.levels)).toEqual(["title", "photo", "button"]);
    const csv = await h.admin("GET", `/pages/${page.key}/export?format=csv`);
    expect(csv.headers.get("content-type")).toMatch(/^text\/csv/);
    // RFC 4180 §2: CRLF line breaks; fields with commas or quotes are quoted, inner quotes doubled
    const lines = csv.text.split("\r\n");
    expect(lines[0]).toBe("segment,status,combination,probability_best,probability_best_se,probability_best_mc_lower,probability_best_mc_upper,rate_mean,rate_lower,rate_upper,title,title_value,photo,photo_value,button,button_value");
    expect(lines.at(-1)).toBe("");
    if (csv.text.includes("title=long")) expect(csv.text).toContain('"Fast, honest repairs, ""guaranteed"""');
    if (csv.text.includes("button=book")) expect(csv.text).toContain('"Book, now"');
    expect(lines.length - 2).toBe(json.body.segments.length);
  });

  describe("PATCH /pages/:key", () => {
    it("changes settings and says what was learned is kept", async () => {
      const r = await h.admin("PATCH", `/pages/${page.key}`, { settings: { explorationFloor: 0.1 } });
      expect(r.status).toBe(200);
      expect(r.body.page.settings.explorationFloor).toBe(0.1);
      expect(r.body.learned.action).toBe("kept");
    });

    it("pauses (baseline served, picks not learned), freezes (leader served) and resumes", async () => {
      const paused = await h.admin("PATCH", `/pages/${page.key}`, { status: "paused" });
      expect(paused.body.page.status).toBe("paused");
      expect(paused.body.learned.message).toMatch(/Paused/);
      const p = await h.pick(page, "visitor-paused", { source: "search" });
      expect(p.body.key).toBe("title=short|photo=shop|button=book");
      expect(p.body.propensity).toBe(1);
      const state = await h.db.pool.query("SELECT state FROM pick WHERE id = $1", [p.body.pick]);
      expect(state.rows[0].state).toBe("ignored");

      const frozen = await h.admin("PATCH", `/pages/${page.key}`, { status: "frozen" });
      expect(frozen.body.page.status).toBe("frozen");
      const report = await h.admin("GET", `/pages/${page.key}/report`);
      const leader = report.body.segments.find((s: { segment: string }) => s.segment === "source=search").leader.combination;
      const f = await h.pick(page, "visitor-frozen", { source: "search" });
      expect(f.body.key).toBe(leader);
      expect(f.body.propensity).toBe(1);

      const resumed = await h.admin("PATCH", `/pages/${page.key}`, { status: "active" });
      expect(resumed.body.page.status).toBe("active");
      expect(resumed.body.learned.message).toMatch(/Resumed/);
    });

    it("adds and removes levels and factors, remapping the model", async () => {
      const before = (await h.admin("GET", `/pages/${page.key}`)).body;
      const added = await h.admin("PATCH", `/pages/${page.key}`, { addLevels: [{ factor: "button", name: "chat", value: "Chat with a mechanic" }] });
      expect(added.status).toBe(200);
      expect(added.body.learned.action).toBe("remapped");
      expect(added.body.learned.addedFeatures.length).toBeGreaterThan(0);
      expect(added.body.learned.droppedFeatures).toEqual([]);
      expect(added.body.page.combinations.total).toBe(18);
      expect(added.body.page.modelVersion).toBeGreaterThan(before.modelVersion);

      const removed = await h.admin("PATCH", `/pages/${page.key}`, { removeLevels: [{ factor: "photo", level: "tools" }], removeFactors: ["title"] });
      expect(removed.status).toBe(200);
      expect(removed.body.page.factors.map((f: { name: string }) => f.name)).toEqual(["photo", "button"]);
      expect(removed.body.learned.droppedFeatures.length).toBeGreaterThan(0);
      expect(removed.body.learned.keptFeatures).toBeGreaterThan(0);
      // visitors now get combinations of the new design only
      const p = await h.pick(page, "visitor-after-edit", { source: "search" });
      expect(Object.keys(p.body.combination)).toEqual(["photo", "button"]);
      expect(p.body.key).not.toMatch(/tools/);
      // a returning visitor whose combination no longer exists gets a new one
      const returning = await h.pick(page, "visitor-1", { source: "search" });
      expect(Object.keys(returning.body.combination)).toEqual(["photo", "button"]);

      // Removing a factor's first level re-bases that factor: the intercept and its coefficients
      // cannot carry over (same names, new meaning), while the other factor's do.
      const rebased = await h.admin("PATCH", `/pages/${page.key}`, { removeLevels: [{ factor: "button", level: "book" }] });
      expect(rebased.status).toBe(200);
      const learned = rebased.body.learned;
      expect(learned.droppedFeatures).toContain("(intercept)");
      expect(learned.addedFeatures).toContain("(intercept)");
      expect(learned.droppedFeatures.some((n: string) => n.includes("button="))).toBe(true);
      expect(learned.droppedFeatures.some((n: string) => n.startsWith("photo=") && !n.includes("button="))).toBe(false);
      expect(learned.keptFeatures).toBeGreaterThan(0);
    });

    it("updates a level's value without touching the model", async () => {
      const before = (await h.admin("GET", `/pages/${page.key}`)).body.modelVersion;
      const r = await h.admin("PATCH", `/pages/${page.key}`, { levelValues: [{ factor: "button", level: "call", value: "Call today" }] });
      expect(r.body.learned.action).toBe("unchanged");
      expect(r.body.page.modelVersion).toBe(before);
      expect(r.body.page.factors[1].levels[0].value).toBe("Call today");
    });
  });

  it("still reads a page whose stored settings name a setting this version does not know", async () => {
    // as after an upgrade that renamed a setting: the stored name is dropped, the rest is kept
    await h.db.pool.query("UPDATE page SET settings = settings || '{\"retiredSettingName\": 3}'::jsonb WHERE key = $1", [page.key]);
    const r = await h.admin("GET", `/pages/${page.key}`);
    expect(r.status).toBe(200);
    expect(r.body.settings).not.toHaveProperty("retiredSettingName");
    expect(r.body.settings.explorationFloor).toBe(0.1);
    expect((await h.pick(page, "after-upgrade", { source: "search" })).status).toBe(200);
  });

  it("streams demo traffic on the demo page only", async () => {
    const other = await h.admin("POST", `/pages/${page.key}/demo-traffic`, { visitors: 10 });
    expect(other.status).toBe(409);
    expect(other.body.error.code).toBe("NOT_DEMO_PAGE");
    expect(await h.server.services.seedDemo()).toBe(false); // the database is not empty
    const pages = h.server.services.pages;
    const { demoPage } = await import("../../src/service/demo.ts");
    await pages.create(demoPage);
    const r = await h.admin("POST", `/pages/${demoPage.key}/demo-traffic`, { visitors: 40 });
    expect(r.status).toBe(202);
    expect(r.body).toEqual({ accepted: 40, running: true });
    const demoId = (await h.db.pool.query("SELECT id FROM page WHERE key = $1", [demoPage.key])).rows[0].id;
    for (let i = 0; i < 100; i++) {
      const n = (await h.db.pool.query("SELECT count(*)::int AS n FROM pick WHERE page_id = $1", [demoId])).rows[0].n;
      if (n === 40) break;
      await new Promise((resolve) => setTimeout(resolve, 100));
    }
    const n = (await h.db.pool.query("SELECT count(*)::int AS n FROM pick WHERE page_id = $1", [demoId])).rows[0].n;
    expect(n).toBe(40);
  });
});
