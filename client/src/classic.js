/**
 * The classic-script form (/client/v1.js): starts itself from its own <script> tag's data-page,
 * data-key, data-context (comma-separated, '%' and ',' percent-encoded), data-timeout, data-consent and data-pick attributes, with facetwise's
 * address taken from the script's own src, and puts the client at window.facetwise.
 */
import { start } from "./core.js";

try {
  const script = document.currentScript;
  const data = (script && script.dataset) || {};
  // the timeout counts from when the browser met this tag (its fetch started), which is when the
  // snippet's CSS began hiding; without a timing entry (the page's buffer of 250 is full), from now
  const seen = script && performance.getEntriesByName(script.src).pop();
  window.facetwise = data.page
    ? start({
      server: script.src.replace(/\/client\/[^/]*$/, ""), page: data.page, key: data.key,
      context: (data.context || "").split(",").filter(Boolean).map(decodeURIComponent), timeout: data.timeout,
      consent: data.consent !== "false", pick: data.pick !== "no", since: seen ? seen.startTime : null,
    })
    : { start };
} catch {
  document.documentElement.classList.add("facetwise-shown");
}
