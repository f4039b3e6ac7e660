/**
 * A table of bad requests: each gets its 4xx with `{error: {code, message, field?}}` naming what
 * to fix, no stack trace, and nothing written (the whole database is fingerprinted before and
 * after). Status codes per RFC 9110 §15.5 (400, 401, 403, 404, 409, 413).
 */
import { beforeAll, expect, it, vi } from "vitest";
import { request } from "node:http";
import { forEachDatabase } from "../support/databases.ts";
import { ADMIN_TOKEN, useHarness, testPage } from "./harness.ts";

interface Case {
  name: string;
  method: string;
  path: string;
  body?: unknown;
  raw?: string;
  headers?: Record<string, string>;
  /** who calls: the admin, the landing page (its own public key), or nobody (no key) */
  as: "admin" | "page" | "none";
  status: number;
  code: string;
  field?: string;
  /** the whole message, where the wording itself is under test (src/issues.ts writes it) */
  message?: string;
  /** a part of the message that must be there */
  says?: RegExp;
}

const P = "/api/v1/pages/fixture";
const UNKNOWN_UUID = "0b6a1c2e-9d7f-4e55-8a1b-3c4d5e6f7a8b";

const cases: Case[] = [
  // malformed and oversize bodies
  { name: "malformed JSON on an admin route", method: "POST", path: "/api/v1/pages", raw: '{"key": "a",', headers: { "content-type": "application/json" }, as: "admin", status: 400, code: "MALFORMED_JSON", field: "body" },
  { name: "malformed JSON on a public route", method: "POST", path: `${P}/picks`, raw: "{visitor: 1}", headers: { "content-type": "application/json" }, as: "page", status: 400, code: "MALFORMED_JSON", field: "body" },
  { name: "oversize public body", method: "POST", path: `${P}/picks`, body: { visitor: "v", context: { note: "x".repeat(20_000) } }, as: "page", status: 413, code: "BODY_TOO_LARGE", field: "body" },
  { name: "oversize admin body", method: "POST", path: "/api/v1/pages", body: { ...testPage("big"), name: "x".repeat(1_100_000) }, as: "admin", status: 413, code: "BODY_TOO_LARGE", field: "body" },
  { name: "no JSON content type", method: "POST", path: "/api/v1/pages", raw: "key=a", headers: { "content-type": "application/x-www-form-urlencoded" }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "body" },
  // picks
  { name: "pick: visitor of the wrong type", method: "POST", path: `${P}/picks`, body: { visitor: 42 }, as: "page", status: 400, code: "INVALID_REQUEST", field: "visitor" },
  { name: "pick: visitor missing", method: "POST", path: `${P}/picks`, body: { context: { source: "search" } }, as: "page", status: 400, code: "INVALID_REQUEST", field: "visitor", message: "visitor: the visitor id is missing: send text" },
  { name: "pick: unknown field", method: "POST", path: `${P}/picks`, body: { visitor: "v", colour: "red" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "colour", message: 'colour: "colour" is not a known field here: remove it or check its spelling' },
  { name: "pick: context value an object", method: "POST", path: `${P}/picks`, body: { visitor: "v", context: { source: { a: 1 } } }, as: "page", status: 400, code: "INVALID_REQUEST", field: "context.source", message: 'context.source: "source" in the context must be text, a number or true/false, not an object' },
  { name: "pick: unknown page", method: "POST", path: "/api/v1/pages/no-such-page/picks", body: { visitor: "v" }, as: "page", status: 404, code: "UNKNOWN_PAGE" },
  { name: "pick: invalid page key", method: "POST", path: "/api/v1/pages/Bad_Key/picks", body: { visitor: "v" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "key" },
  { name: "pick: no X-Page-Key", method: "POST", path: `${P}/picks`, body: { visitor: "v" }, as: "none", status: 401, code: "UNAUTHORIZED" },
  { name: "pick: wrong X-Page-Key", method: "POST", path: `${P}/picks`, body: { visitor: "v" }, headers: { "x-page-key": "pk_not-this-one" }, as: "none", status: 403, code: "FORBIDDEN" },
  { name: "pick: admin token instead of the page key", method: "POST", path: `${P}/picks`, body: { visitor: "v" }, headers: { authorization: `Bearer ${ADMIN_TOKEN}` }, as: "none", status: 401, code: "UNAUTHORIZED" },
  // outcomes
  { name: "outcome: pick id not a UUID", method: "POST", path: `${P}/outcomes`, body: { pick: "abc" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "pick" },
  { name: "outcome: unknown pick", method: "POST", path: `${P}/outcomes`, body: { pick: UNKNOWN_UUID, event: "e1" }, as: "page", status: 404, code: "UNKNOWN_PICK", field: "pick" },
  { name: "outcome: value not a number", method: "POST", path: `${P}/outcomes`, body: { pick: UNKNOWN_UUID, value: "12" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "value" },
  { name: "outcome: empty event id", method: "POST", path: `${P}/outcomes`, body: { pick: UNKNOWN_UUID, event: "" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "event", message: "event: the event id cannot be empty" },
  // auth on admin routes; the public key never reads reports or definitions
  { name: "admin route without a token", method: "GET", path: "/api/v1/pages", as: "none", status: 401, code: "UNAUTHORIZED" },
  { name: "admin route with a wrong token", method: "GET", path: "/api/v1/pages", headers: { authorization: "Bearer fw_admin_wrong" }, as: "none", status: 401, code: "UNAUTHORIZED" },
  { name: "report with the page's public key", method: "GET", path: `${P}/report`, as: "page", status: 401, code: "UNAUTHORIZED" },
  { name: "definition with the page's public key", method: "GET", path: P, as: "page", status: 401, code: "UNAUTHORIZED" },
  { name: "create a page without a token", method: "POST", path: "/api/v1/pages", body: testPage("sneaky"), as: "none", status: 401, code: "UNAUTHORIZED" },
  // page definitions
  { name: "page key with capitals and spaces", method: "POST", path: "/api/v1/pages", body: { ...testPage("x"), key: "My Page" }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "key" },
  { name: "page without factors", method: "POST", path: "/api/v1/pages", body: { ...testPage("nofactors"), factors: [] }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "factors", message: "factors: add at least 1 factor" },
  { name: "factor without a name", method: "POST", path: "/api/v1/pages", body: { ...testPage("noname"), factors: [{ name: "", levels: [{ name: "a" }, { name: "b" }] }] }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "factors.0.name", message: "factors.0.name: factor 1 needs a name" },
  { name: "level name too long", method: "POST", path: "/api/v1/pages", body: { ...testPage("longlevel"), factors: [{ name: "title", levels: [{ name: "a" }, { name: "b".repeat(101) }] }] }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "factors.0.levels.1.name", message: "factors.0.levels.1.name: the name of level 2 of factor 1 is too long: use at most 100 characters" },
  { name: "exclusion naming an unknown level", method: "POST", path: "/api/v1/pages", body: { ...testPage("badrule"), exclude: [{ photo: "sunset" }] }, as: "admin", status: 400, code: "UNKNOWN_LEVEL", field: "exclude.0.photo" },
  { name: "interaction naming an unknown factor", method: "POST", path: "/api/v1/pages", body: { ...testPage("badpair"), interactions: [["title", "colour"]] }, as: "admin", status: 400, code: "UNKNOWN_FACTOR" },
  { name: "duplicate level names", method: "POST", path: "/api/v1/pages", body: { ...testPage("dup"), factors: [{ name: "title", levels: [{ name: "a" }, { name: "a" }] }] }, as: "admin", status: 400, code: "INVALID_DEFINITION" },
  { name: "setting out of range", method: "POST", path: "/api/v1/pages", body: { ...testPage("badsetting"), settings: { baselineShare: 1.5 } }, as: "admin", status: 400, code: "INVALID_SETTING", field: "baselineShare", message: 'Invalid setting "baselineShare": the value must be less than 1' },
  { name: "unknown setting", method: "POST", path: "/api/v1/pages", body: { ...testPage("typo"), settings: { foldEverySeconds: 5 } }, as: "admin", status: 400, code: "INVALID_SETTING", field: "foldEverySeconds" },
  { name: "segmentBy with a bad name", method: "POST", path: "/api/v1/pages", body: { ...testPage("badseg"), segmentBy: ["source|x"] }, as: "admin", status: 400, code: "INVALID_DEFINITION", field: "segmentBy.0" },
  { name: "existing page key", method: "POST", path: "/api/v1/pages", body: testPage("fixture"), as: "admin", status: 409, code: "PAGE_EXISTS", field: "key" },
  { name: "check a definition with one level", method: "POST", path: "/api/v1/definitions/check", body: { factors: [{ name: "title", levels: [{ name: "only" }] }] }, as: "admin", status: 400, code: "INVALID_DEFINITION" },
  // the check takes the whole create body and answers as POST /pages would
  { name: "check: setting out of range", method: "POST", path: "/api/v1/definitions/check", body: { ...testPage("checkset"), settings: { baselineShare: 1.5 } }, as: "admin", status: 400, code: "INVALID_SETTING", field: "baselineShare" },
  { name: "check: segmentBy with a bad name", method: "POST", path: "/api/v1/definitions/check", body: { ...testPage("checkseg"), segmentBy: ["source|x"] }, as: "admin", status: 400, code: "INVALID_DEFINITION", field: "segmentBy.0" },
  { name: "check: page key with capitals", method: "POST", path: "/api/v1/definitions/check", body: { ...testPage("x"), key: "My Page" }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "key", message: "key: the page key is not valid: use 1–63 lowercase letters, digits and '-', starting with a letter or digit" },
  { name: "check: existing page key", method: "POST", path: "/api/v1/definitions/check", body: testPage("fixture"), as: "admin", status: 409, code: "PAGE_EXISTS", field: "key" },
  { name: "check: unknown field", method: "POST", path: "/api/v1/definitions/check", body: { ...testPage("x"), colour: "red" }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "colour" },
  // page edits
  { name: "edit: remove an unknown factor", method: "PATCH", path: P, body: { removeFactors: ["colour"] }, as: "admin", status: 400, code: "UNKNOWN_FACTOR", field: "removeFactors.0" },
  { name: "edit: remove an unknown level", method: "PATCH", path: P, body: { removeLevels: [{ factor: "photo", level: "sunset" }] }, as: "admin", status: 400, code: "UNKNOWN_LEVEL", field: "removeLevels.0.level" },
  { name: "edit: valid value change plus an unknown level", method: "PATCH", path: P, body: { name: "Renamed", levelValues: [{ factor: "title", level: "short", value: "changed" }, { factor: "title", level: "tiny", value: "x" }] }, as: "admin", status: 400, code: "UNKNOWN_LEVEL", field: "levelValues.1.level" },
  { name: "edit: unknown status", method: "PATCH", path: P, body: { status: "stopped" }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "status", message: 'status: the status must be one of "active", "paused" or "frozen"' },
  { name: "edit: setting out of range", method: "PATCH", path: P, body: { settings: { explorationFloor: 2 } }, as: "admin", status: 400, code: "INVALID_SETTING", field: "explorationFloor" },
  { name: "edit: a whole number setting given a fraction", method: "PATCH", path: P, body: { settings: { samples: 10.5 } }, as: "admin", status: 400, code: "INVALID_SETTING", field: "samples", message: 'Invalid setting "samples": the value must be a whole number, not 10.5' },
  { name: "edit: leave a factor one level", method: "PATCH", path: P, body: { removeLevels: [{ factor: "title", level: "long" }] }, as: "admin", status: 400, code: "INVALID_DEFINITION" },
  { name: "edit: unknown page", method: "PATCH", path: "/api/v1/pages/no-such-page", body: { name: "x" }, as: "admin", status: 404, code: "UNKNOWN_PAGE" },
  // reads
  { name: "report of an unknown page", method: "GET", path: "/api/v1/pages/no-such-page/report", as: "admin", status: 404, code: "UNKNOWN_PAGE" },
  { name: "export in an unknown format", method: "GET", path: `${P}/export?format=xml`, as: "admin", status: 400, code: "INVALID_REQUEST", field: "format" },
  { name: "demo traffic on a normal page", method: "POST", path: `${P}/demo-traffic`, body: { visitors: 10 }, as: "admin", status: 409, code: "NOT_DEMO_PAGE" },
  { name: "demo traffic: zero visitors", method: "POST", path: `${P}/demo-traffic`, body: { visitors: 0 }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "visitors", message: "visitors: the number of visitors must be at least 1" },
  { name: "unknown API route", method: "GET", path: "/api/v1/nothing-here", as: "admin", status: 404, code: "NOT_FOUND" },
  // text PostgreSQL cannot store, addresses that do not decode, and error texts (issue 11)
  { name: "path with bad percent-encoding", method: "POST", path: "/api/v1/pages/%ff/picks", body: { visitor: "v" }, as: "none", status: 400, code: "INVALID_REQUEST", field: "path" },
  { name: "admin path with bad percent-encoding", method: "GET", path: "/api/v1/pages/%c3%28/report", as: "admin", status: 400, code: "INVALID_REQUEST", field: "path" },
  { name: "dot segment as the page key", method: "POST", path: "/api/v1/pages/./picks", body: { visitor: "v" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "key" },
  { name: "pick: NUL in the visitor id", method: "POST", path: `${P}/picks`, body: { visitor: "a\u0000b" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "visitor", says: /NUL/ },
  { name: "pick: NUL in a context value", method: "POST", path: `${P}/picks`, body: { visitor: "v", context: { source: "x\u0000" } }, as: "page", status: 400, code: "INVALID_REQUEST", field: "context.source" },
  { name: "pick: NUL in a context name", method: "POST", path: `${P}/picks`, body: { visitor: "v", context: { "so\u0000urce": "x" } }, as: "page", status: 400, code: "INVALID_REQUEST", field: "context.so\u0000urce" },
  { name: "pick: lone surrogate in a context value", method: "POST", path: `${P}/picks`, body: { visitor: "v", context: { source: "x\ud800" } }, as: "page", status: 400, code: "INVALID_REQUEST", field: "context.source", says: /surrogate/ },
  { name: "pick: lone surrogate in the visitor id", method: "POST", path: `${P}/picks`, body: { visitor: "\udc00v" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "visitor" },
  { name: "pick: a JSON string body", method: "POST", path: `${P}/picks`, raw: '"hello"', headers: { "content-type": "application/json" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "body", says: /JSON string, not an object/ },
  { name: "pick: 17 kB body states the 16 kB limit", method: "POST", path: `${P}/picks`, body: { visitor: "x".repeat(17_000) }, as: "page", status: 413, code: "BODY_TOO_LARGE", says: /16 kB \(16384 bytes\)/ },
  { name: "outcome: NUL in the event id", method: "POST", path: `${P}/outcomes`, body: { pick: UNKNOWN_UUID, event: "e\u0000" }, as: "page", status: 400, code: "INVALID_REQUEST", field: "event" },
  { name: "NUL in the page name", method: "POST", path: "/api/v1/pages", body: { ...testPage("nulname"), name: "a\u0000" }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "name" },
  { name: "lone surrogate in a level value", method: "POST", path: "/api/v1/pages", body: { ...testPage("surrogate"), factors: [{ name: "title", levels: [{ name: "a", value: "x\ud83d" }, { name: "b" }] }] }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "factors.0.levels.0.value" },
  { name: "edit: lone surrogate in a level value", method: "PATCH", path: P, body: { levelValues: [{ factor: "title", level: "short", value: "\udfff" }] }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "levelValues.0.value" },
  { name: "NUL in a query string", method: "GET", path: `${P}/export?format=js%00on`, as: "admin", status: 400, code: "INVALID_REQUEST", field: "query.format" },
  { name: "page without its factors", method: "POST", path: "/api/v1/pages", body: { key: "nofactors2", name: "n" }, as: "admin", status: 400, code: "INVALID_REQUEST", field: "factors", message: "factors: the factors are missing: send a list" },
];

/** Sends the path exactly as written (fetch would remove "./" dot segments, RFC 3986 §5.2.4). */
function rawRequest(url: string, method: string, path: string, headers: Record<string, string>, body?: unknown): Promise<{ status: number; text: string }> {
  const payload = body === undefined ? undefined : JSON.stringify(body);
  return new Promise((resolve, reject) => {
    const { hostname, port } = new URL(url);
    const req = request({ hostname, port, path, method, headers: { ...headers, ...(payload ? { "content-type": "application/json" } : {}) } }, (res) => {
      let text = "";
      res.on("data", (d) => (text += d)).on("end", () => resolve({ status: res.statusCode ?? 0, text }));
    });
    req.on("error", reject);
    req.end(payload);
  });
}

const TABLES = ["page", "factor", "level", "exclusion_rule", "segment", "pick", "assignment", "outcome", "posterior_snapshot", "allocation_record", "retired_combination", "api_key", "fold_log"];

forEachDatabase("bad inputs", (open) => {
  const h = useHarness(open);
  let publicKey: string;

  /** Everything a rejected request could have changed. */
  async function fingerprint(): Promise<string> {
    const counts = await Promise.all(TABLES.map(async (t) => `${t}=${await h.count(t)}`));
    const { rows } = await h.db.pool.query(
      `SELECT (SELECT string_agg(concat_ws('/', key, name, status, settings::text, model_version, updated_at), ';' ORDER BY id) FROM page) AS pages,
              (SELECT string_agg(concat_ws('/', name, value), ';' ORDER BY id) FROM level) AS levels`);
    return JSON.stringify({ counts, ...rows[0] });
  }

  beforeAll(async () => {
    const created = await h.admin("POST", "/pages", testPage("fixture"));
    publicKey = created.body.publicKey;
    const pick = await h.pick({ key: "fixture", publicKey }, "someone", { source: "search" });
    expect(pick.status).toBe(200);
  });

  it.each(cases)("$name → $status $code", async (c) => {
    const headers: Record<string, string> = { ...c.headers };
    if (c.as === "admin") headers.authorization = `Bearer ${ADMIN_TOKEN}`;
    if (c.as === "page") headers["x-page-key"] = publicKey;
    const before = await fingerprint();
    // a client's mistake is answered, not logged: nothing reaches the server log
    const logged: unknown[] = [];
    const spies = (["error", "warn", "log"] as const).map((m) => vi.spyOn(console, m).mockImplementation((...a: unknown[]) => void logged.push(a)));
    const r = c.path.includes("/./")
      ? await rawRequest(h.url, c.method, c.path, headers, c.body).then((x) => ({ ...x, body: JSON.parse(x.text) }))
      : await h.call(c.method, c.path, { body: c.body, raw: c.raw, headers });
    spies.forEach((spy) => spy.mockRestore());
    expect(logged).toEqual([]);
    expect(r.status).toBe(c.status);
    expect(r.body.error.code).toBe(c.code);
    expect(typeof r.body.error.message).toBe("string");
    expect(r.body.error.message).not.toMatch(/\{\w+\}/); // every template placeholder filled
    if (c.field !== undefined) expect(r.body.error.field).toBe(c.field);
    if (c.message !== undefined) expect(r.body.error.message).toBe(c.message);
    if (c.says !== undefined) expect(r.body.error.message).toMatch(c.says);
    // zod's own wording (its default messages, zod 4) never reaches a user
    expect(r.body.error.message).not.toMatch(/Too small|Too big|Invalid input|Invalid option|Unrecognized key|expected \w+ to have|received \w+$/);
    expect(r.text).not.toMatch(/\.ts:\d+|node_modules|at \w+ \(/); // no stack trace
    expect(await fingerprint()).toBe(before);
  });

  it("an event id reused on another pick is refused with 409 saying so, and nothing is written", async () => {
    const page = { key: "fixture", publicKey };
    const first = await h.pick(page, "reuse-1");
    const second = await h.pick(page, "reuse-2");
    expect((await h.outcome(page, { pick: first.body.pick, event: "order-77" })).status).toBe(202);
    const again = await h.outcome(page, { pick: first.body.pick, event: "order-77" });
    expect(again.status).toBe(202);
    expect(again.body.duplicate).toBe(true);
    const before = await fingerprint();
    const r = await h.outcome(page, { pick: second.body.pick, event: "order-77" });
    expect(r.status).toBe(409);
    expect(r.body.error.code).toBe("EVENT_REUSED");
    expect(r.body.error.field).toBe("event");
    expect(r.body.error.message).toContain(first.body.pick);
    expect(r.body.error.message).toContain("another pick");
    expect(await fingerprint()).toBe(before);
  });

  it("an outcome for another page's pick is unknown there", async () => {
    const other = await h.admin("POST", "/pages", testPage("other-page"));
    const pick = await h.pick({ key: "other-page", publicKey: other.body.publicKey }, "v-other");
    const before = await fingerprint();
    const r = await h.outcome({ key: "fixture", publicKey }, { pick: pick.body.pick, event: "cross" });
    expect(r.status).toBe(404);
    expect(r.body.error.code).toBe("UNKNOWN_PICK");
    expect(await fingerprint()).toBe(before);
  });
});

