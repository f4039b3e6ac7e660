/**
 * Property-based fuzz of every route with fast-check (seeded; FACETWISE_FUZZ_SEED to replay):
 * paths with random page keys and percent-encodings, bodies that are arbitrary JSON, near-valid
 * shapes with hostile strings (NUL, lone surrogates, formula prefixes, markup, long text), and
 * non-JSON text. Each request must be answered within 15 s, never with 5xx, and a request answered
 * with 4xx must leave the database as it was. 60 cases per route in CI, 2,000 with
 * FACETWISE_RELIABILITY_SCALE=nightly. Prints the status counts per route.
 */
import { beforeAll, expect, it } from "vitest";
import fc from "fast-check";
import { forEachDatabase } from "../support/databases.ts";
import { ADMIN_TOKEN, useHarness, testPage } from "../integration/harness.ts";
import { size } from "./scale.ts";

const SEED = Number(process.env.FACETWISE_FUZZ_SEED ?? 20261203);
const RUNS = size(60, 2000);

const hostile = fc.constantFrom("", "\u0000", "a\u0000b", "\ud800", "x\udc00", "\ud83d\ude00", "=SUM(A1)", "+1", "-1", "@x", "\t=1",
  "<script>alert(1)</script>", "../../etc/passwd", "%ff", "'; DROP TABLE page; --", "a".repeat(300), " ", "short", "long", "shop", "title", "photo");
/** Text of every kind, lone surrogates included (fc.string16bits draws any UTF-16 code unit). */
const text = fc.oneof(hostile, fc.string({ maxLength: 40 }), fc.string16bits({ maxLength: 40 }), fc.fullUnicodeString({ maxLength: 20 }));
/** Hostile text PostgreSQL can store: formula prefixes, markup, SQL, separators, astral characters. */
const storable = fc.oneof(fc.constantFrom("=SUM(A1)", "+1", "-1", "@x", "\t=1", "<script>alert(1)</script>", "../../etc/passwd", "%ff",
  "'; DROP TABLE page; --", "a".repeat(300), "\ud83d\ude00", "line\u2028break", "x, \"y\"\r\nz"), fc.fullUnicodeString({ minLength: 1, maxLength: 30 }));
/** Mostly storable, sometimes not: what a near-valid request carries. */
const mostlyStorable = fc.oneof({ weight: 4, arbitrary: storable }, { weight: 1, arbitrary: text });
const scalar = fc.oneof(text, fc.integer(), fc.double(), fc.boolean(), fc.constant(null));
const anyJson = fc.jsonValue({ maxDepth: 3 });
const record = (values: fc.Arbitrary<unknown>) => fc.dictionary(text, values, { maxKeys: 4 });
const level = fc.record({ name: text, value: fc.option(text, { nil: undefined }) }, { requiredKeys: [] });
const factor = fc.record({ name: text, levels: fc.array(level, { maxLength: 4 }) }, { requiredKeys: [] });
const uuid = fc.oneof(fc.uuid(), text);

/** Picks served before the fuzz starts, so outcomes can name real ones. */
const servedPicks: string[] = [];
const servedPick = fc.integer({ min: 0, max: 9 }).map((i) => servedPicks[i]);

const bodies: Record<string, fc.Arbitrary<unknown>> = {
  pick: fc.oneof(
    fc.record({ visitor: fc.oneof(text, scalar), context: fc.oneof(record(scalar), anyJson) }, { requiredKeys: [] }),
    // near valid: hostile text where the server stores it
    fc.record({ visitor: mostlyStorable, context: fc.dictionary(fc.constantFrom("source", "campaign", "device"), fc.oneof(mostlyStorable, fc.integer(), fc.boolean()), { maxKeys: 3 }) }),
  ),
  outcome: fc.oneof(
    fc.record({ pick: uuid, event: fc.oneof(text, scalar), value: fc.oneof(fc.double(), scalar) }, { requiredKeys: [] }),
    fc.record({ pick: servedPick, event: mostlyStorable, value: fc.double() }, { requiredKeys: ["pick"] }),
  ),
  page: fc.oneof(fc.record({
    key: fc.oneof(text, fc.stringMatching(/^[a-z0-9][a-z0-9-]{0,20}$/)), name: text, factors: fc.array(factor, { maxLength: 3 }),
    exclude: fc.array(record(text), { maxLength: 2 }), segmentBy: fc.array(text, { maxLength: 2 }), settings: record(scalar),
    interactions: fc.array(fc.tuple(text, text), { maxLength: 2 }),
  }, { requiredKeys: [] }),
  // near valid: a well-formed page whose names, values and settings are hostile
  fc.record({
    key: fc.stringMatching(/^[a-z0-9][a-z0-9-]{0,20}$/), name: mostlyStorable.map((n) => n.slice(0, 200)),
    factors: fc.tuple(storable, storable, mostlyStorable, storable).map(([a, b, c, d]) => [
      { name: "title", levels: [{ name: "a", value: a }, { name: "b", value: b }] },
      { name: "photo", levels: [{ name: "p", value: c }, { name: d.slice(0, 100), value: "" }] },
    ]),
    exclude: fc.array(fc.record({ title: fc.constantFrom("a", "b", "zz"), photo: fc.constantFrom("p", "q") }, { requiredKeys: ["title"] }), { maxLength: 1 }),
    segmentBy: fc.array(fc.constantFrom("source", "device", "source", "a|b"), { maxLength: 2 }),
    settings: fc.dictionary(fc.constantFrom("foldIntervalSeconds", "samples", "explorationFloor", "addressRequestsPerMinute", "halfLifeDays"), fc.oneof(fc.integer({ min: 1, max: 5000 }), scalar), { maxKeys: 2 }),
  }, { requiredKeys: ["key", "name", "factors"] })),
  patch: fc.oneof(fc.record({
    name: text, status: fc.oneof(fc.constantFrom("active", "paused", "frozen"), text), settings: record(scalar),
    addLevels: fc.array(fc.record({ factor: fc.constantFrom("title", "photo", "button"), name: text, value: text }, { requiredKeys: [] }), { maxLength: 2 }),
    removeLevels: fc.array(fc.record({ factor: text, level: text }, { requiredKeys: [] }), { maxLength: 2 }),
    levelValues: fc.array(fc.record({ factor: fc.constantFrom("title", "photo"), level: fc.constantFrom("short", "long", "shop"), value: text }, { requiredKeys: [] }), { maxLength: 2 }),
    removeFactors: fc.array(text, { maxLength: 1 }), addFactors: fc.array(factor, { maxLength: 1 }),
  }, { requiredKeys: [] }),
  // near valid: one well-formed edit carrying hostile text or settings
  fc.oneof(
    mostlyStorable.map((name) => ({ name })),
    mostlyStorable.map((value) => ({ levelValues: [{ factor: "title", level: "short", value }] })),
    fc.tuple(fc.string({ minLength: 1, maxLength: 10 }), mostlyStorable).map(([name, value]) => ({ addLevels: [{ factor: "button", name, value }] })),
    fc.dictionary(fc.constantFrom("foldIntervalSeconds", "samples", "thompsonScale", "pageRequestsPerMinute"), scalar, { maxKeys: 2 }).map((settings) => ({ settings })),
  )),
  demo: fc.record({ visitors: scalar }, { requiredKeys: [] }),
};

/** A page key as it appears in a path: the fixture, a plausible key, or anything percent-encoded or not. */
const keyInPath = fc.oneof(
  { weight: 6, arbitrary: fc.constant("fixture") }, fc.stringMatching(/^[a-z0-9-]{1,12}$/),
  text.map((t) => {
    try {
      return encodeURIComponent(t);
    } catch {
      return "%ed%a0%80"; // a lone surrogate has no UTF-8: send its CESU bytes instead
    }
  }),
  fc.constantFrom("%ff", "%", "%zz", ".", "..", "%2e", "a%00b", "%c3%28", "%e2%80%a8"),
);

/** A request body: shaped, arbitrary JSON, or text that is not JSON at all. */
const payload = (shape: fc.Arbitrary<unknown>) => fc.oneof(
  { weight: 6, arbitrary: shape.map((b) => ({ raw: JSON.stringify(b), type: "application/json" })) },
  { weight: 2, arbitrary: anyJson.map((b) => ({ raw: JSON.stringify(b), type: "application/json" })) },
  { weight: 1, arbitrary: fc.string16bits({ maxLength: 60 }).map((t) => ({ raw: t, type: "application/json" })) },
  { weight: 1, arbitrary: fc.tuple(fc.string({ maxLength: 40 }), fc.constantFrom("text/plain", "application/x-www-form-urlencoded", "text/csv")).map(([raw, type]) => ({ raw, type })) },
);

interface Route { name: string; method: string; path: (key: string) => string; as: "admin" | "page"; body?: fc.Arbitrary<unknown> }
const routes: Route[] = [
  { name: "POST picks", method: "POST", path: (k) => `/api/v1/pages/${k}/picks`, as: "page", body: bodies.pick },
  { name: "POST outcomes", method: "POST", path: (k) => `/api/v1/pages/${k}/outcomes`, as: "page", body: bodies.outcome },
  { name: "POST pages", method: "POST", path: () => "/api/v1/pages", as: "admin", body: bodies.page },
  { name: "POST definitions/check", method: "POST", path: () => "/api/v1/definitions/check", as: "admin", body: bodies.page },
  { name: "PATCH page", method: "PATCH", path: (k) => `/api/v1/pages/${k}`, as: "admin", body: bodies.patch },
  { name: "POST demo-traffic", method: "POST", path: (k) => `/api/v1/pages/${k}/demo-traffic`, as: "admin", body: bodies.demo },
  { name: "GET page", method: "GET", path: (k) => `/api/v1/pages/${k}`, as: "admin" },
  { name: "GET report", method: "GET", path: (k) => `/api/v1/pages/${k}/report`, as: "admin" },
  { name: "GET export", method: "GET", path: (k) => `/api/v1/pages/${k}/export`, as: "admin" },
  { name: "GET pages, session", method: "GET", path: (k) => (k === "fixture" ? "/api/v1/pages" : "/api/v1/session"), as: "admin" },
];

const query = fc.oneof(fc.constant(""), fc.constantFrom("?format=csv", "?format=json", "?format=xml", "?format=%00", "?format=%ff", "?format=csv&format=json", "?pageKey=%ff"),
  text.map((t) => `?format=${encodeURIComponent(t.replace(/[\ud800-\udfff]/g, ""))}`));

forEachDatabase("fuzz of every route", (open) => {
  const h = useHarness(open);
  let publicKey: string;
  beforeAll(async () => {
    publicKey = (await h.admin("POST", "/pages", testPage("fixture"))).body.publicKey;
    expect(publicKey).toBeTruthy();
    servedPicks.length = 0;
    for (let i = 0; i < 10; i++) servedPicks.push((await h.pick({ key: "fixture", publicKey }, `served-${i}`, { source: "search" })).body.pick);
  });

  /** One query over everything a request could write. */
  const fingerprint = async () => JSON.stringify((await h.db.pool.query(
    `SELECT (SELECT count(*) FROM page) AS pages, (SELECT max(updated_at) FROM page) AS edited,
            (SELECT string_agg(concat_ws('/', name, status, settings::text), ';' ORDER BY id) FROM page) AS fields,
            (SELECT count(*) FROM level) AS levels, (SELECT string_agg(value, ';' ORDER BY id) FROM level) AS values,
            (SELECT count(*) FROM factor) AS factors, (SELECT count(*) FROM exclusion_rule) AS rules,
            (SELECT count(*) FROM pick) AS picks, (SELECT count(*) FROM outcome) AS outcomes, (SELECT count(*) FROM segment) AS segments,
            (SELECT count(*) FROM assignment) AS assignments, (SELECT count(*) FROM posterior_snapshot) AS snapshots,
            (SELECT count(*) FROM api_key) AS keys`)).rows[0]);

  it.each(routes)("$name: no 5xx, no hang, nothing written when refused", { timeout: 1_800_000 }, async (route) => {
    const statuses = new Map<number, number>();
    const bodyOf = route.body ? payload(route.body) : fc.constant(null);
    await fc.assert(fc.asyncProperty(keyInPath, bodyOf, query, async (key, body, q) => {
      const headers: Record<string, string> = route.as === "admin" ? { authorization: `Bearer ${ADMIN_TOKEN}` } : { "x-page-key": publicKey };
      if (body) headers["content-type"] = body.type;
      // an accepted edit's fold may still be running: it writes a snapshot, not this request
      await h.server.services.folds.idle();
      const before = await fingerprint();
      const response = await fetch(h.url + route.path(key) + (route.method === "GET" ? q : ""), {
        method: route.method, headers, body: body?.raw, signal: AbortSignal.timeout(15_000),
      });
      const text = await response.text();
      statuses.set(response.status, (statuses.get(response.status) ?? 0) + 1);
      if (response.status >= 500) throw new Error(`${route.method} ${route.path(key)} → ${response.status} ${text.slice(0, 300)}`);
      expect(text).not.toMatch(/\.ts:\d+|node_modules|at \w+ \(/);
      if (response.status >= 400) {
        expect(JSON.parse(text).error.code).toMatch(/^[A-Z_]+$/);
        expect(await fingerprint(), `${route.method} ${route.path(key)} ${response.status} wrote`).toBe(before);
      }
    }), { seed: SEED, numRuns: RUNS, endOnFailure: true });
    console.log(`fuzz ${route.name}: ${RUNS} cases (seed ${SEED}), statuses ${JSON.stringify(Object.fromEntries([...statuses].sort()))}`);
  });
});
