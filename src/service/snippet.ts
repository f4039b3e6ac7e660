/**
 * The integration snippet a landing page pastes: one <style> that hides the marked elements for at
 * most `timeout` ms by CSS alone (an animation whose backwards fill is visibility: hidden, so the
 * elements show at the deadline even if the client never loads), and one async <script> that loads
 * the client with its SRI hash and passes page key, public key, context keys and options as data
 * attributes — no inline script, so it works under a Content-Security-Policy without
 * 'unsafe-inline' for scripts; the style's hash is given for style-src.
 *
 * Every value is written as an HTML attribute value in double quotes with & < > " ' and U+2028/
 * U+2029 as character references (HTML Living Standard, 13.1.2.3 attribute values; U+2028/2029
 * because the snippet is often pasted into JavaScript template strings): nothing typed into a page
 * can end the attribute, the tag, or a script around it. Context key names are comma-separated,
 * with '%' and ',' percent-encoded.
 */
import { createHash } from "node:crypto";

export interface SnippetOptions {
  /** ms before the page's own content shows regardless (default 1000) */
  timeout: number;
  /** context keys the client sends (default: the page's segmentBy) */
  context: string[];
  /** false: keep no identifier beyond the page view until facetwise.consent(true) */
  consent: boolean;
  /** false on pages that only report conversions (a thank-you page): no pick, nothing hidden */
  pick?: boolean;
}

export interface Snippet {
  html: string;
  /** SRI value of the client script the snippet loads */
  integrity: string;
  /** the Content-Security-Policy sources the snippet needs */
  csp: string;
}

const ENTITIES: Record<string, string> = { "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;", "\u2028": "&#x2028;", "\u2029": "&#x2029;" };

export function attributeValue(value: string): string {
  return value.replace(/[&<>"'\u2028\u2029]/g, (c) => ENTITIES[c]);
}

/** The CSS that hides `[data-facet]` elements until the client is done or `timeout` ms passed. */
export function waitStyle(timeout: number): string {
  return `html:not(.facetwise-shown) [data-facet]{animation:facetwise-wait 0s ${timeout}ms both}@keyframes facetwise-wait{from{visibility:hidden}}`;
}

/** CSP source expression for an inline element's text (CSP Level 3, "hash-source": base64 SHA-256). */
export function cspHash(text: string): string {
  return `'sha256-${createHash("sha256").update(text, "utf8").digest("base64")}'`;
}

export function snippetOf(page: { key: string; publicKey: string }, origin: string, integrity: string, options: SnippetOptions): Snippet {
  const style = waitStyle(options.timeout);
  const attributes: [string, string][] = [
    ["src", `${origin}/client/v1.js`], ["integrity", integrity], ["crossorigin", "anonymous"],
    ["data-page", page.key], ["data-key", page.publicKey],
    ["data-context", options.context.map((name) => name.replace(/[%,]/g, encodeURIComponent)).join(",")],
    ["data-timeout", String(options.timeout)],
  ];
  if (!options.consent) attributes.push(["data-consent", "false"]);
  if (options.pick === false) attributes.push(["data-pick", "no"]);
  const html = `<style>${style}</style>\n<script async ${attributes.map(([name, value]) => `${name}="${attributeValue(value)}"`).join(" ")}></script>`;
  return { html, integrity, csp: `script-src ${origin}; connect-src ${origin}; style-src ${cspHash(style)}` };
}
