/**
 * Export and integrate: the chosen combination per segment (from the server's JSON export), CSV and
 * JSON downloads fetched with the token in a header, and the integration snippet exactly as
 * GET /pages/:key/snippet answers it (the server builds and escapes it), with the client's
 * Subresource-Integrity hash and the Content-Security-Policy sources it needs.
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
  let snippet = "";
  const code = h("code", null, "Loading the snippet…");
  const integrity = h("code", null, "…");
  const csp = h("code", null, "…");
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
  const loadSnippet = async () => {
    try {
      const answer = await api<{ html: string; integrity: string; csp: string }>("GET", `/pages/${encodeURIComponent(page.key)}/snippet`);
      snippet = answer.html;
      code.textContent = answer.html;
      integrity.textContent = answer.integrity;
      csp.textContent = answer.csp;
    } catch (error) {
      code.textContent = `The snippet could not be loaded: ${(error as Error).message}`;
    }
  };
  void loadSnippet();

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
      h("p", null, "Paste these two lines into the landing page's ", h("code", null, "<head>"), ". They load the facetwise client, which asks which combination to show this visitor and writes each level into the elements marked ",
        h("code", null, "data-facet=\"factor name\""), ". Report a conversion with ", h("code", null, "facetwise.convert({ event: \"order-123\", value: 49.9 })"), "."),
      h("ul", { class: "hint" },
        h("li", null, "Text goes in as text. For an image or a colour, add ", h("code", null, "data-facet-attr=\"src\""), " or ", h("code", null, "data-facet-style=\"background-color\""), ". A level without a value only sets ", h("code", null, "data-facet-level"), " and a class; the element's content stays."),
        h("li", null, "Marked elements wait at most 1 second (", h("code", null, "data-timeout"), "); then the page's own content shows, whatever happened."),
        h("li", null, "Context sent: the page's segment keys (", h("code", null, "data-context"), "). Add ", h("code", null, "device"), ", ", h("code", null, "referrer"), " or any address parameter such as ", h("code", null, "utm_campaign"), "."),
        h("li", null, "The visitor id is a random id kept in the browser, never a name or e-mail address; ", h("code", null, "data-consent=\"false\""), " keeps nothing until ", h("code", null, "facetwise.consent(true)"), "."),
        h("li", null, "The public key can only pick and report conversions; it cannot read results.")),
      h("div", { class: "snippet" }, h("pre", { tabindex: "0", "aria-label": "Integration snippet" }, code)),
      h("div", { class: "actions" }, h("button", { type: "button", onclick: copy }, "Copy snippet"), copyNote),
      h("dl", { class: "integrity" },
        h("dt", null, "Subresource Integrity of the client (already in the snippet)"), h("dd", null, integrity),
        h("dt", null, "Content-Security-Policy sources the snippet needs"), h("dd", null, csp)),
    ),
  );

  const contexts = h("div", { "aria-live": "off" }, h("p", { class: "hint" }, "Loading…"));
  element.append(h(
    "section",
    { class: "panel", "aria-labelledby": "context-title" },
    h("h2", { id: "context-title" }, "Context values as segments see them"),
    h("p", { class: "hint" }, "Values are trimmed, case-folded, and runs of spaces, '-' and '_' become one '-'; an empty value is (none). The last ten distinct values this server saw per segment key, newest first."),
    contexts,
  ));

  let seq = 0;
  return {
    element,
    async refresh() {
      const mine = ++seq;
      try {
        const [data, report] = await Promise.all([
          api<ExportJson>("GET", `${path}?format=json`),
          api<{ contextValues?: Record<string, { raw: string; normalized: string; seen: number }[]> }>("GET", `/pages/${encodeURIComponent(page.key)}/report`),
        ]);
        if (mine !== seq) return;
        replace(preview, exportTable(data));
        replace(contexts, contextTable(report.contextValues ?? {}));
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

function contextTable(values: Record<string, { raw: string; normalized: string; seen: number }[]>): HTMLElement {
  const keys = Object.keys(values);
  if (keys.length === 0) return h("p", { class: "hint" }, "No visitors with context since the server started.");
  return h(
    "table",
    { class: "data stack" },
    h("thead", null, h("tr", null, h("th", { scope: "col" }, "Segment key"), h("th", { scope: "col" }, "Sent"), h("th", { scope: "col" }, "Becomes"), h("th", { scope: "col", class: "num" }, "Visitors"))),
    h("tbody", null, keys.flatMap((key) => values[key].map((v) =>
      h("tr", null,
        h("th", { scope: "row" }, key),
        h("td", { "data-label": "Sent" }, h("code", null, JSON.stringify(v.raw))),
        h("td", { "data-label": "Becomes" }, v.normalized),
        h("td", { class: "num", "data-label": "Visitors" }, String(v.seen)))))),
  );
}
