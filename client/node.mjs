/**
 * facetwise for server-rendered pages: Node 18+ (global fetch), ESM, no dependencies; works with
 * express, node:http or anything that hands you a cookie header.
 *
 *   import { createFacetwise } from "facetwise/client/node.mjs"; // or a copy of this file
 *   const facetwise = createFacetwise({ server: "https://fw.example.com", page: "spring-landing",
 *     key: "pk_…", timeout: 300, baseline: { headline: { level: "plain", value: "Bike repair in town" } } });
 *   app.get("/", async (req, res) => {
 *     const shown = await facetwise.pickFor(req, res, { context: { source: req.query.utm_source } });
 *     res.render("landing", { headline: shown.combination.headline?.value });
 *   });
 *   app.post("/order", async (req, res) => {
 *     await facetwise.convertFor(req, { event: order.id, value: order.total });
 *   });
 *
 * Fail-open as the browser client: pick() never throws; after `timeout` ms, on any error or when
 * the visitor has no id, it answers the baseline with `fallback: true` and the reason.
 */
import { randomUUID } from "node:crypto";

const COOKIE = "fw_visitor";

/** The visitor id in a Cookie header, or null. */
export function visitorFromCookie(header, name = COOKIE) {
  for (const part of String(header || "").split(";")) {
    const at = part.indexOf("=");
    if (at > 0 && part.slice(0, at).trim() === name) {
      const value = decodeURIComponent(part.slice(at + 1).trim());
      if (/^[\w-]{8,200}$/.test(value)) return value;
    }
  }
  return null;
}

/** Set-Cookie for the visitor id (RFC 6265 attributes): a year, the whole site, HttpOnly, SameSite=Lax. */
export function visitorCookie(visitor, { name = COOKIE, secure = true, maxAgeDays = 365 } = {}) {
  return `${name}=${encodeURIComponent(visitor)}; Path=/; Max-Age=${maxAgeDays * 86400}; SameSite=Lax; HttpOnly${secure ? "; Secure" : ""}`;
}

const sleep = (ms) => new Promise((resolve) => setTimeout(resolve, ms));

export function createFacetwise({ server, page, key, timeout = 300, baseline = {}, cookie = COOKIE, secure = true, retries = 4 }) {
  const api = `${String(server).replace(/\/$/, "")}/api/v1/pages/${encodeURIComponent(page)}`;
  const headers = { "Content-Type": "application/json", "X-Page-Key": key };

  /** { pick, combination, segment, fallback: false } or { pick: null, combination: baseline, fallback: true, reason }. */
  async function pick({ visitor, context = {} }) {
    const fallback = (reason) => ({ pick: null, combination: baseline, segment: null, fallback: true, reason });
    if (!visitor) return fallback("no visitor id");
    const clean = Object.fromEntries(Object.entries(context).filter(([, v]) => v !== undefined && v !== null).map(([k, v]) => [k, Array.isArray(v) ? String(v[0]) : v]));
    try {
      const response = await fetch(`${api}/picks`, {
        method: "POST", headers, body: JSON.stringify({ visitor, context: clean }), signal: AbortSignal.timeout(timeout),
      });
      if (!response.ok) return fallback(`facetwise answered ${response.status}`);
      const answer = await response.json();
      if (!answer || typeof answer.combination !== "object" || !answer.combination) return fallback("unexpected answer");
      return { pick: answer.pick, combination: answer.combination, segment: answer.segment, fallback: false };
    } catch (error) {
      return fallback(error && error.name === "TimeoutError" ? `no answer within ${timeout} ms` : `facetwise unreachable (${error && error.message})`);
    }
  }

  /**
   * Reports a conversion against a pick id; retried with exponential backoff on network errors,
   * 408, 429 and 5xx (idempotent: the event id makes a repeat count once). Resolves to facetwise's
   * answer ({ accepted, counted, … }) or { accepted: false, status, error }; never throws.
   */
  async function convert(pickId, { event = randomUUID(), value } = {}) {
    const body = JSON.stringify(value === undefined ? { pick: pickId, event } : { pick: pickId, event, value });
    let last = { accepted: false, error: "not sent" };
    for (let attempt = 0; attempt <= retries; attempt++) {
      if (attempt) await sleep(Math.min(8000, 200 * 2 ** attempt) * (0.5 + Math.random() / 2));
      try {
        const response = await fetch(`${api}/outcomes`, { method: "POST", headers, body, signal: AbortSignal.timeout(5000) });
        const answer = await response.json().catch(() => ({}));
        if (response.ok) return answer;
        last = { accepted: false, status: response.status, error: answer.error };
        if (!(response.status >= 500 || response.status === 408 || response.status === 429)) return last;
      } catch (error) {
        last = { accepted: false, error: String(error && error.message) };
      }
    }
    return last;
  }

  /** The visitor of a request (node:http or express), giving a new one a cookie through `res`. */
  function visitorFor(req, res) {
    const known = visitorFromCookie(req.headers.cookie, cookie);
    if (known || !res) return known;
    const visitor = randomUUID();
    const set = visitorCookie(visitor, { name: cookie, secure });
    const previous = res.getHeader("Set-Cookie");
    res.setHeader("Set-Cookie", previous ? [].concat(previous, set) : set);
    return visitor;
  }

  return {
    pick,
    convert,
    visitorFor,
    /** pick() for a request, with the visitor id from (or set into) the cookie. `consent: false`: no cookie, a one-off id. */
    pickFor: (req, res, { context, consent = true } = {}) => pick({ visitor: consent ? visitorFor(req, res) : randomUUID(), context }),
    /** convert() for a request: the visitor's sticky pick (facetwise answers the same pick again), then the conversion. */
    async convertFor(req, conversion) {
      const visitor = visitorFromCookie(req.headers.cookie, cookie);
      if (!visitor) return { accepted: false, error: "the request has no visitor cookie" };
      const shown = await pick({ visitor });
      return shown.pick ? convert(shown.pick, conversion) : { accepted: false, error: shown.reason };
    },
  };
}
