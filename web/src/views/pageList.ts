/** The list of pages: what each one is, whether it is learning, and how much traffic it has seen. */
import { api } from "../api.ts";
import { h, replace } from "../dom.ts";
import { n, pct, plural, when } from "../format.ts";
import { pageHref, type View } from "../shell.ts";
import type { Page } from "../types.ts";
import { statusBadge } from "./parts.ts";

export function renderPageList(main: HTMLElement): View {
  document.title = "Pages · facetwise";
  const list = h("div", { class: "page-list", "aria-busy": "true" }, h("p", { class: "hint" }, "Loading pages…"));
  replace(
    main,
    h(
      "div",
      { class: "head-row" },
      h("h1", null, "Pages"),
      h("a", { class: "button primary", href: "#/new" }, "Define a new page"),
    ),
    list,
  );

  let timer = 0;
  let disposed = false;
  const load = async () => {
    try {
      const { pages } = await api<{ pages: Page[] }>("GET", "/pages");
      if (disposed) return;
      list.removeAttribute("aria-busy");
      if (pages.length === 0) {
        replace(list, h("p", { class: "panel" }, "No pages yet. ", h("a", { href: "#/new" }, "Define the first one"), "."));
      } else {
        const demo = pages.find((p) => p.demo);
        replace(
          list,
          demo ? h("aside", { class: "panel intro", "aria-label": "Getting started" },
            h("h2", null, "New here? Start with the demo"),
            h("ol", null,
              h("li", null, "Open ", h("a", { href: pageHref(demo.key) }, demo.name), " and press ", h("strong", null, "Send demo visitors"), "."),
              h("li", null, "Watch each traffic source find its own winner under ", h("strong", null, "Results"), ", and losing combinations being retired."),
              h("li", null, "When a segment says ", h("strong", null, "Settled"), ", download the winners from ", h("strong", null, "Export & integrate"), "."))) : null,
          pages.map(pageCard),
        );
      }
    } catch (error) {
      if (!disposed) replace(list, h("p", { class: "form-error", role: "alert" }, (error as Error).message));
    }
    if (!disposed) timer = window.setTimeout(load, 10_000);
  };
  void load();
  return {
    dispose() {
      disposed = true;
      clearTimeout(timer);
    },
  };
}

function pageCard(page: Page): HTMLElement {
  const rate = page.totals.visitors > 0 ? page.totals.conversions / page.totals.visitors : null;
  return h(
    "article",
    { class: "panel page-card" },
    h(
      "h2",
      null,
      h("a", { href: pageHref(page.key) }, page.name),
      page.demo ? h("span", { class: "tag" }, "demo") : null,
    ),
    h("p", { class: "key" }, page.key),
    h(
      "dl",
      { class: "facts" },
      h("div", null, h("dt", null, "Status"), h("dd", null, statusBadge(page.status))),
      h(
        "div",
        null,
        h("dt", null, "Design"),
        h("dd", null, `${plural(page.factors.length, "factor")} · ${plural(page.combinations.allowed, "combination")}`),
      ),
      h("div", null, h("dt", null, "Visitors"), h("dd", null, n(page.totals.visitors))),
      h("div", null, h("dt", null, "Conversion rate"), h("dd", null, pct(rate))),
      h("div", null, h("dt", null, "Segments"), h("dd", null, page.totals.segments === 0
        ? "none yet"
        : `${n(page.totals.settled)} of ${plural(page.totals.segments, "segment")} settled`)),
      h("div", null, h("dt", null, "Last update"), h("dd", null, when(page.lastFoldAt))),
    ),
  );
}
