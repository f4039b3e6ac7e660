/**
 * Export and integrate: the chosen combination per segment (from the server's JSON export), CSV and
 * JSON downloads fetched with the token in a header, and a ready-to-paste snippet that picks on
 * page load with the page's public key, renders the levels' values and reports the conversion.
 */
import { ApiError, api, download } from "../api.ts";
import { h, replace } from "../dom.ts";
import { absoluteTime, pct, prob, segmentLabel } from "../format.ts";
import { announce } from "../shell.ts";
import type { ExportJson, Page } from "../types.ts";
import { levelValue, segmentBadge } from "./parts.ts";

export function renderExport(page: Page): { element: HTMLElement; refresh(): void } {
  const preview = h("div", { class: "table-wrap", "aria-live": "off" }, h("p", { class: "hint" }, "Loading the export…"));
  const downloadNote = h("p", { class: "hint", role: "status" });
  const path = `/pages/${encodeURIComponent(page.key)}/export`;
  const get = async (format: "csv" | "json") => {
    downloadNote.textContent = "";
    try {
      const blob = await download(`${path}?format=${format}`, `${page.key}-chosen.${format}`);
      downloadNote.textContent = `Downloaded ${page.key}-chosen.${format} (${blob.size} bytes).`;
    } catch (error) {
      downloadNote.textContent = `The download failed: ${(error as Error).message}`;
    }
  };
  const snippet = integrationSnippet(page, location.origin);
  const code = h("code", null, snippet);
  const copyNote = h("span", { class: "hint", role: "status" });
  const copy = async () => {
    try {
      await navigator.clipboard.writeText(snippet);
      copyNote.textContent = "Copied.";
    } catch {
      const range = document.createRange();
      range.selectNodeContents(code);
      const selection = getSelection();
      selection?.removeAllRanges();
      selection?.addRange(range);
      copyNote.textContent = "Selected: press Ctrl+C (⌘C on a Mac) to copy.";
    }
    announce(copyNote.textContent ?? "");
  };

  const element = h(
    "div",
    { class: "export" },
    h(
      "section",
      { class: "panel", "aria-labelledby": "export-title" },
      h("h2", { id: "export-title" }, "The chosen combination per segment"),
      h("p", { class: "hint" }, "Each segment's leader with the values to build, or the baseline where no leader has been named yet. Hand it to whoever builds the pages or the ad campaigns."),
      h("div", { class: "actions" },
        h("button", { type: "button", class: "primary", onclick: () => get("csv") }, "Download CSV"),
        h("button", { type: "button", onclick: () => get("json") }, "Download JSON")),
      downloadNote,
      preview,
    ),
    h(
      "section",
      { class: "panel", "aria-labelledby": "snippet-title" },
      h("h2", { id: "snippet-title" }, "Put it on the landing page"),
      h("p", null, "Paste this into the landing page. On load it asks facetwise which combination to show this visitor, writes each level's value into the elements marked ",
        h("code", null, "data-facet=\"factor name\""), ", and ", h("code", null, "facetwiseConvert()"), " reports the conversion."),
      h("ul", { class: "hint" },
        h("li", null, "Text goes in as text. For an image or a colour, add ", h("code", null, "data-facet-attr=\"src\""), " or ", h("code", null, "data-facet-style=\"background-color\""), "."),
        h("li", null, "The visitor id is a random id kept in the browser, never a name or e-mail address."),
        h("li", null, "The public key can only pick and report conversions; it cannot read results.")),
      h("div", { class: "snippet" }, h("pre", { tabindex: "0", "aria-label": "Integration snippet" }, code)),
      h("div", { class: "actions" }, h("button", { type: "button", onclick: copy }, "Copy snippet"), copyNote),
    ),
  );

  let seq = 0;
  return {
    element,
    async refresh() {
      const mine = ++seq;
      try {
        const data = await api<ExportJson>("GET", `${path}?format=json`);
        if (mine !== seq) return;
        replace(preview, exportTable(data));
      } catch (error) {
        if (mine !== seq) return;
        replace(preview, h("p", { class: "form-error" }, error instanceof ApiError ? error.message : String(error)));
      }
    },
  };
}

function exportTable(data: ExportJson): HTMLElement {
  if (data.segments.length === 0) return h("p", { class: "hint" }, "No segments yet: the export fills in once visitors arrive.");
  return h(
    "div",
    null,
    h(
      "table",
      { class: "data export-table stack" },
      h("caption", { class: "hint" }, `Model update ${data.modelVersion}, generated ${absoluteTime(data.generatedAt)}`),
      h("thead", null, h("tr", null,
        h("th", { scope: "col" }, "Segment"), h("th", { scope: "col" }, "Status"), h("th", { scope: "col" }, "Levels and values"),
        h("th", { scope: "col", class: "num" }, "Chance best"), h("th", { scope: "col", class: "num" }, "Rate"))),
      h("tbody", null, data.segments.map((seg) =>
        h("tr", null,
          h("th", { scope: "row" }, segmentLabel(seg.segment)),
          h("td", { "data-label": "Status" }, seg.status === "waiting" || seg.status === "exploring" || seg.status === "settled" ? segmentBadge(seg.status) : seg.status),
          h("td", { class: "wide", "data-label": "Levels and values" }, h("ul", { class: "plain" }, Object.entries(seg.levels).map(([factor, { level, value }]) =>
            h("li", null, h("span", { class: "chip-f" }, factor), " ", h("strong", null, level), " ", levelValue(value))))),
          h("td", { class: "num", "data-label": "Chance best" }, prob(seg.probabilityBest, seg.probabilityBestError)),
          h("td", { class: "num", "data-label": "Rate" }, seg.rate ? pct(seg.rate.mean) : "—"),
        ))),
    ),
  );
}

/** Embeds a string in the snippet's script as a JS literal that cannot close the <script> tag. */
function literal(value: unknown): string {
  return JSON.stringify(value).replace(/</g, "\\u003c").replace(/\u2028/g, "\\u2028").replace(/\u2029/g, "\\u2029");
}

/** The integration snippet for this page. Exported for the browser suite's check of its contents. */
export function integrationSnippet(page: Page, origin: string): string {
  const factors = page.factors.map((f) => f.name.replace(/[\r\n]/g, " ")).join(", ");
  return `<style>html:not(.facets-ready) [data-facet] { visibility: hidden; }</style>
<script>
(() => {
  const server = ${literal(`${origin}/api/v1/pages/${encodeURIComponent(page.key)}`)};
  const headers = { "Content-Type": "application/json", "X-Page-Key": ${literal(page.publicKey)} };
  const segmentKeys = ${literal(page.segmentBy)}; // read from the address: ?source=… or ?utm_source=…
  // Factors on this page: ${factors.replace(/</g, "‹")}

  let visitor = localStorage.getItem("facetwise-visitor");
  if (!visitor) {
    visitor = crypto.randomUUID();
    localStorage.setItem("facetwise-visitor", visitor);
  }
  const params = new URLSearchParams(location.search);
  const context = {};
  for (const key of segmentKeys) {
    const value = params.get(key) ?? params.get("utm_" + key);
    if (value) context[key] = value;
  }

  const picked = fetch(server + "/picks", { method: "POST", headers, body: JSON.stringify({ visitor, context }) })
    .then((response) => (response.ok ? response.json() : Promise.reject(new Error("pick " + response.status))))
    .then((pick) => {
      for (const [factor, level] of Object.entries(pick.combination)) {
        const value = level.value ?? level.level;
        for (const el of document.querySelectorAll('[data-facet="' + CSS.escape(factor) + '"]')) {
          if (el.dataset.facetAttr) el.setAttribute(el.dataset.facetAttr, value);
          else if (el.dataset.facetStyle) el.style.setProperty(el.dataset.facetStyle, value);
          else el.textContent = value;
        }
      }
      return pick;
    })
    .finally(() => document.documentElement.classList.add("facets-ready")); // on failure the page's own content shows

  // Call when the visitor converts; pass your order or sign-up id so a repeat is counted once.
  window.facetwiseConvert = (eventId) =>
    picked.then((pick) =>
      fetch(server + "/outcomes", { method: "POST", headers, body: JSON.stringify({ pick: pick.pick, event: eventId }) }));
})();
</script>`;
}
