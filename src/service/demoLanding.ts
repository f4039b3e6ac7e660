/**
 * The demo page's own landing page (/demo/landing) and thank-you page (/demo/landing/thanks), as a
 * customer would build them: marked elements, the integration snippet, and a strict
 * Content-Security-Policy (no inline script; inline styles only by hash) to show the client works
 * under one. The thank-you page loads the client with data-pick="no" and reports the conversion
 * against the pick remembered from the landing page.
 */
import type { Snippet } from "./snippet.ts";
import { cspHash } from "./snippet.ts";

const PAGE_STYLE = "body{font:17px/1.5 system-ui,sans-serif;margin:0;color:#1d2a1d;background:#fbfaf6}" +
  "header{padding:12px 24px;background:#1d2a1d;color:#fbfaf6}main{max-width:680px;margin:0 auto;padding:24px}" +
  "img{max-width:100%;height:auto;border-radius:8px}.badge{font-weight:600;color:#8a5a00}.badge:empty{display:none}" +
  "button{font:inherit;padding:12px 22px;border:0;border-radius:6px;background:#c0392b;color:#fff;cursor:pointer}" +
  ".note{font-size:14px;color:#5b665b}";

export interface LandingPage { html: string; csp: string }

function page(title: string, snippet: Snippet, body: string, script?: string): LandingPage {
  const html = `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width,initial-scale=1">
<title>${title}</title>
<style>${PAGE_STYLE}</style>
${snippet.html}
${script ? `<script defer src="${script}"></script>\n` : ""}</head>
<body><header><strong>Spokeline</strong> · bike repair workshop</header>
<main>
${body}
<p class="note">A facetwise demo: this page is rendered by the landing-page client. Try <a href="?utm_source=search">?utm_source=search</a>, <a href="?utm_source=social">social</a> or <a href="?utm_source=newsletter">newsletter</a>.</p>
</main></body></html>`;
  const csp = `default-src 'none'; script-src 'self'; connect-src 'self'; img-src 'self'; style-src ${cspHash(PAGE_STYLE)} ${snippet.csp.split("style-src ")[1]}; base-uri 'none'; form-action 'self'; frame-ancestors 'none'`;
  return { html, csp };
}

export function demoLanding(snippet: Snippet): LandingPage {
  return page("Spokeline — bike repair", snippet, `<h1 data-facet="headline">Bike repair in town</h1>
<img data-facet="hero" data-facet-attr="src" src="/demo/hero-mechanic.svg" alt="Our workshop" width="640" height="360">
<p class="badge" data-facet="badge"></p>
<form action="/demo/landing/thanks" method="get"><button type="submit" data-facet="cta">Book a slot</button></form>`);
}

export function demoThanks(snippet: Snippet): LandingPage {
  return page("Spokeline — thank you", snippet, "<h1>Thank you — we will be in touch today.</h1>", "/demo/landing/thanks.js");
}

/** The thank-you page's script: one conversion, worth the €39 service, once the client is ready. */
export const THANKS_SCRIPT = `(function () {
  function convert() { window.facetwise.convert({ event: "demo-order-" + (new URLSearchParams(location.search).get("order") || Date.now()), value: 39 }); }
  if (window.facetwise && window.facetwise.ready) window.facetwise.ready.then(convert);
  else document.addEventListener("facetwise:ready", convert, { once: true });
})();
`;
