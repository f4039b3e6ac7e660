/**
 * The landing-page client: asks facetwise which combination to show this visitor, renders it into
 * the elements marked data-facet="<factor>", and reports conversions until they arrive.
 *
 * Fail-open is the first rule: start() never throws and its promise never rejects; the page's own
 * content shows at the deadline whatever happened (no fetch, no randomUUID, storage missing or
 * throwing, a 4xx/5xx, malformed JSON, a hung server, an exception in here), and an answer after
 * the deadline is dropped, not applied. The hiding itself is the snippet's CSS, which reveals on
 * its own at the same deadline even if this script never runs.
 *
 * Requests are CORS "simple requests" (POST, text/plain body, public key in the query) so a
 * visit costs one round trip, with no preflight; the server reads text/plain bodies as JSON.
 * Written in plain JavaScript with no dependencies; client/build.mjs bundles and minifies it.
 */

const PREFIX = "facetwise:";
const SHOWN = "facetwise-shown";
const RETRIES = 8;

const SEARCH = /(^|\.)((google|bing|yahoo|duckduckgo|baidu|yandex|ecosia|qwant|startpage|naver|seznam)\.[a-z.]+|search\.brave\.com)$/;
const SOCIAL = /(^|\.)(facebook\.com|fb\.com|instagram\.com|twitter\.com|x\.com|t\.co|linkedin\.com|lnkd\.in|pinterest\.[a-z.]+|reddit\.com|tiktok\.com|youtube\.com|youtu\.be|snapchat\.com|threads\.net|tumblr\.com)$/;

/** The referrer's host class: search, social, direct (none, or this site's own host) or other. */
export function referrerClass(referrer, host) {
  let from = "";
  try {
    from = referrer ? new URL(referrer).hostname.toLowerCase() : "";
  } catch {
    return "other";
  }
  if (!from || from === host) return "direct";
  return SEARCH.test(from) ? "search" : SOCIAL.test(from) ? "social" : "other";
}

/** phone, tablet or desktop, from the user agent (and client hints where Chromium offers them). */
export function deviceClass(nav) {
  const ua = nav.userAgent || "";
  if (nav.userAgentData && nav.userAgentData.mobile) return "phone";
  if (/iPad|Tablet|Kindle|Silk|PlayBook/i.test(ua) || (/Android/i.test(ua) && !/Mobi/i.test(ua)) || (/Macintosh/.test(ua) && nav.maxTouchPoints > 1)) return "tablet";
  return /Mobi|iPhone|iPod|Android|Phone/i.test(ua) ? "phone" : "desktop";
}

/**
 * The context the page chose to send: "device" and "referrer" are classes computed here; any other
 * name is read from the address, `name` first, then `utm_name` (so "campaign" reads ?utm_campaign=).
 */
export function contextOf(names, location, referrer, nav) {
  const query = new URLSearchParams(location.search);
  const context = {};
  for (const name of names) {
    const value = name === "device" ? deviceClass(nav)
      : name === "referrer" ? referrerClass(referrer, location.hostname)
        : query.get(name) ?? query.get("utm_" + name);
    if (value !== null) context[name] = value;
  }
  return context;
}

function randomId() {
  try {
    return crypto.randomUUID();
  } catch {
    let bytes;
    try {
      bytes = crypto.getRandomValues(new Uint8Array(16));
    } catch {
      bytes = Array.from({ length: 16 }, () => (Math.random() * 256) | 0);
    }
    return Array.from(bytes, (b) => (b + 256).toString(16).slice(1)).join("");
  }
}

/** localStorage if it works here (it throws when the browser blocks it), else null. */
function openStorage() {
  try {
    const s = window.localStorage;
    s.setItem(PREFIX, "1");
    s.removeItem(PREFIX);
    return s;
  } catch {
    return null;
  }
}

/**
 * Renders a pick: each element marked data-facet="<factor>" gets data-facet-level="<level>" and the
 * class facet-<factor>-<level>; a non-empty value goes into the attribute named by data-facet-attr,
 * the CSS property named by data-facet-style, or else the text. An empty value leaves the content alone.
 */
export function render(document, combination) {
  const marked = document.querySelectorAll("[data-facet]");
  // read the whole answer first: a malformed one throws here, before anything changed on the page
  const levels = Object.keys(combination).map((factor) => {
    const { level, value } = combination[factor];
    if (level == null) throw factor;
    return [factor, String(level), value == null ? "" : String(value)];
  });
  for (const [factor, level, value] of levels) {
    for (const el of marked) {
      if (el.getAttribute("data-facet") !== factor) continue;
      el.setAttribute("data-facet-level", level);
      el.classList.add(("facet-" + factor + "-" + level).replace(/[^\w-]/g, "_"));
      if (!value) continue;
      const attr = el.getAttribute("data-facet-attr");
      const style = el.getAttribute("data-facet-style");
      if (attr) {
        if (!/^on/i.test(attr)) el.setAttribute(attr, value);
      } else if (style) el.style.setProperty(style, value);
      else el.textContent = value;
    }
  }
}

/**
 * Starts the client. options: server (facetwise's base URL), page (page key), key (public key),
 * context (names to send), timeout (ms, default 1000), consent (default true), pick (default true;
 * false on pages that only report conversions), since (the performance.now() time the timeout
 * counts from; default now — the classic script passes when its own tag was seen, close to when
 * the snippet's CSS started hiding). Returns { ready, convert, consent, context }.
 */
export function start(options) {
  const o = options || {};
  const doc = document;
  const timeout = o.timeout != null && +o.timeout >= 0 ? +o.timeout : 1000;
  const deadline = (o.since != null ? +o.since : performance.now()) + timeout;
  const api = String(o.server || "").replace(/\/$/, "") + "/api/v1/pages/" + encodeURIComponent(o.page) + "/";
  const query = "?pageKey=" + encodeURIComponent(o.key || "");
  let store = o.consent === false ? null : openStorage();
  const read = (name) => {
    try {
      return store && store.getItem(PREFIX + name);
    } catch {
      return null;
    }
  };
  const write = (name, value) => {
    try {
      if (store) value == null ? store.removeItem(PREFIX + name) : store.setItem(PREFIX + name, value);
    } catch {
      // full or blocked: the page view still works, it is just not remembered
    }
  };
  const visitor = read("visitor") || randomId();
  write("visitor", visitor);

  let context = {};
  let pick = null;
  let settle;
  let done = false;
  const ready = new Promise((resolve) => (settle = resolve));
  const controller = typeof AbortController == "function" ? new AbortController() : null;
  const finish = (applied, reason) => {
    if (done) return;
    done = true;
    clearTimeout(timer);
    if (controller && !applied) controller.abort();
    doc.documentElement.classList.add(SHOWN);
    settle({ applied, reason, pick });
  };
  // announced after start() returned, so listeners find window.facetwise in place
  ready.then((detail) => doc.dispatchEvent(new CustomEvent("facetwise:ready", { detail }))).catch(() => undefined);
  const timer = setTimeout(() => finish(false, "timeout"), Math.max(0, deadline - performance.now()));

  let queue = [];
  try {
    queue = JSON.parse(read("queue") || "[]").filter((item) => item && Date.now() - item.at < 7 * 864e5);
  } catch {
    queue = [];
  }
  const save = () => write("queue", queue.length ? JSON.stringify(queue.slice(-20)) : null);
  const outcomeUrl = (item) => String(item.api) + "outcomes?pageKey=" + encodeURIComponent(item.key);
  const body = (item) => JSON.stringify({ pick: item.pick, event: item.event, value: item.value });
  const drop = (item) => {
    queue = queue.filter((other) => other !== item);
    save();
  };
  const send = (item) => {
    if (typeof fetch != "function") {
      try {
        if (navigator.sendBeacon(outcomeUrl(item), body(item))) drop(item);
      } catch {
        // nothing left to try on this page; a later page retries from storage
      }
      return;
    }
    const retry = () => {
      item.tries = (item.tries || 0) + 1;
      save();
      if (item.tries < RETRIES) setTimeout(() => send(item), Math.min(3e4, 250 * 2 ** item.tries) * (0.5 + Math.random() / 2));
    };
    fetch(outcomeUrl(item), { method: "POST", body: body(item), keepalive: true, credentials: "omit", headers: { "Content-Type": "text/plain" } })
      .then((response) => (response.status >= 500 || response.status === 408 || response.status === 429 ? retry() : drop(item)), retry);
  };
  // what did not arrive before the visitor left goes as a beacon; it stays queued (the server
  // counts an event id once) until a later page sees it acknowledged
  const flush = () => {
    try {
      if (doc.visibilityState !== "hidden") return;
      for (const item of queue) navigator.sendBeacon(outcomeUrl(item), body(item));
    } catch {
      // no sendBeacon: storage keeps them for the next page
    }
  };

  try {
    addEventListener("pagehide", flush);
    doc.addEventListener("visibilitychange", flush);
    queue.slice().forEach(send);
    context = contextOf(o.context || [], location, doc.referrer, navigator);
    if (o.pick === false || typeof fetch != "function") finish(false, o.pick === false ? "no pick" : "unsupported");
    else {
      fetch(api + "picks" + query, {
        method: "POST", credentials: "omit", signal: controller && controller.signal,
        headers: { "Content-Type": "text/plain" }, body: JSON.stringify({ visitor, context }),
      })
        .then((response) => (response.ok ? response.json() : Promise.reject(response.status)))
        .then((answer) => {
          const apply = () => {
            if (done) return;
            try {
              render(doc, answer.combination);
              pick = String(answer.pick);
              write("pick:" + o.page, pick);
              finish(true, "applied");
            } catch {
              finish(false, "error");
            }
          };
          doc.readyState == "loading" ? doc.addEventListener("DOMContentLoaded", apply) : apply();
        })
        .catch(() => finish(false, "error"));
    }
  } catch {
    finish(false, "error");
  }

  return {
    ready,
    context,
    /** Reports a conversion ({ event, value }) against this visitor's pick; resolves true once queued. */
    convert(conversion) {
      return ready.then((state) => {
        const c = conversion || {};
        const against = state.pick || read("pick:" + o.page);
        if (!against) return false;
        const item = { api, key: o.key, pick: against, event: c.event != null ? String(c.event) : randomId(), value: c.value, at: Date.now() };
        queue.push(item);
        save();
        send(item);
        return true;
      }).catch(() => false);
    },
    /** Switches storage on (the visitor id, pick and queue are kept from now on) or off (all removed). */
    consent(given) {
      try {
        if (given) {
          store = openStorage();
          write("visitor", visitor);
          if (pick) write("pick:" + o.page, pick);
          save();
        } else {
          for (const name of Object.keys(store || {})) if (name.indexOf(PREFIX) === 0) store.removeItem(name);
          store = null;
        }
      } catch {
        store = null;
      }
    },
  };
}
