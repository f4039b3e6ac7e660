/**
 * One page: its header (status, totals, last model update), the demo-traffic control on the demo
 * page, and four tabs — results per segment, retired combinations, export and integration, and
 * managing the running page. Figures refresh by polling the report; the view keeps its own state
 * (tab, chosen segment, open panels) and re-draws only the figures, so scroll position, focus and
 * anything typed into a form survive every refresh.
 */
import { api, ApiError, tagged } from "../api.ts";
import { h, replace } from "../dom.ts";
import { n, pct, setFactorOrder, when } from "../format.ts";
import { pageHref, type Route, type View } from "../shell.ts";
import type { Page, Report } from "../types.ts";
import { statusBadge } from "./parts.ts";
import { renderResults } from "./results.ts";
import { renderRetired, retiredCount } from "./retired.ts";
import { renderExport } from "./exportTab.ts";
import { renderManage } from "./manage.ts";
import { demoControl } from "./demo.ts";

export interface UiState {
  segment: string | null;
  open: Set<string>;
}

const tabs = [
  { id: "results", label: "Results" },
  { id: "retired", label: "Retired" },
  { id: "export", label: "Export & integrate" },
  { id: "manage", label: "Manage" },
] as const;
type TabId = (typeof tabs)[number]["id"];

const FAST_POLL_MS = 2_000;
const SLOW_POLL_MS = 5_000;

export function renderPageView(main: HTMLElement, route: Route): View {
  const key = route.key as string;
  let tab: TabId = tabIdOf(route.tab);
  let page: Page | null = null;
  /** The ETag `page` came with: the version a Manage form opened on it edits. */
  let pageTag: string | null = null;
  let report: Report | null = null;
  let timer = 0;
  let disposed = false;
  let fastUntil = 0;
  /** Counts the user's own changes (Manage), so a poll that raced one is discarded. */
  let changes = 0;
  const ui: UiState = { segment: null, open: new Set() };

  const title = h("h1", null, "…");
  const keyLine = h("p", { class: "key" }, key);
  const statusSlot = h("span");
  const totals = h("p", { class: "totals" });
  const freshness = h("p", { class: "hint freshness", "aria-live": "off" });
  const errorLine = h("p", { class: "form-error", role: "alert" });
  const demoSlot = h("div");
  const tabBar = h("div", { class: "tabs", role: "tablist", "aria-label": "Page sections" });
  const panel = h("section", { class: "tab-panel", role: "tabpanel", tabindex: "-1" });
  let manageElement: HTMLElement | null = null;
  let exportView: ReturnType<typeof renderExport> | null = null;

  replace(
    main,
    h(
      "header",
      { class: "page-head" },
      h("div", { class: "page-title" }, title, statusSlot),
      keyLine,
      totals,
      freshness,
      errorLine,
    ),
    demoSlot,
    tabBar,
    panel,
  );

  // the tab links are built once and updated in place, so a refresh never takes keyboard focus off them
  const pills = new Map<TabId, HTMLElement>();
  const tabLinks = tabs.map((t) => {
    const pill = h("span", { class: "count-pill", hidden: true });
    pills.set(t.id, pill);
    return h(
      "a",
      {
        href: pageHref(key, t.id),
        role: "tab",
        id: `tab-${t.id}`,
        "aria-controls": "tab-panel",
        "data-tab": t.id,
        onkeydown: (event: Event) => {
          const e = event as KeyboardEvent;
          const i = tabs.findIndex((x) => x.id === t.id);
          const j = e.key === "ArrowRight" ? i + 1 : e.key === "ArrowLeft" ? i - 1 : null;
          if (j === null) return;
          e.preventDefault();
          const next = tabs[(j + tabs.length) % tabs.length];
          location.hash = pageHref(key, next.id);
          document.getElementById(`tab-${next.id}`)?.focus();
        },
      },
      t.label,
      pill,
    );
  });
  replace(tabBar, tabLinks);

  function drawTabs(): void {
    for (const link of tabLinks) {
      const current = link.dataset.tab === tab;
      link.setAttribute("aria-selected", String(current));
      link.tabIndex = current ? 0 : -1;
      link.classList.toggle("current", current);
      link.classList.add("tab");
    }
    const retiredN = report ? retiredCount(report) : 0;
    const pill = pills.get("retired") as HTMLElement;
    pill.hidden = retiredN === 0;
    pill.textContent = String(retiredN);
    panel.id = "tab-panel";
    panel.setAttribute("aria-labelledby", `tab-${tab}`);
  }

  function drawHead(): void {
    if (!page) return;
    title.textContent = page.name;
    document.title = `${page.name} · facetwise`;
    replace(statusSlot, statusBadge(report?.status ?? page.status));
    const t = report?.totals ?? { ...page.totals, pending: 0 };
    const rate = t.visitors > 0 ? t.conversions / t.visitors : null;
    replace(
      totals,
      h("span", null, h("strong", null, n(t.visitors)), " visitors"),
      h("span", null, h("strong", null, n(t.conversions)), " conversions"),
      h("span", null, h("strong", null, pct(rate)), " overall"),
      t.pending ? h("span", null, h("strong", null, n(t.pending)), " waiting for the next fold") : null,
    );
    const version = report?.modelVersion ?? page.modelVersion;
    freshness.textContent =
      version > 0
        ? `Model update ${n(version)}, ${when(report?.lastFoldAt ?? page.lastFoldAt)} · figures refresh on their own`
        : "No model update yet: the first one follows the first visits · figures refresh on their own";
  }

  function drawPanel(fromPoll: boolean): void {
    if (!page) return;
    if (tab === "manage") {
      // a form: built once per page view and kept while other tabs are shown, so unsaved edits
      // survive tab switches; never re-drawn under the user's typing
      manageElement ??= renderManage({ value: page, etag: pageTag }, (updated) => {
        page = updated.value;
        pageTag = updated.etag;
        changes += 1;
        if (report) report.status = updated.value.status;
        setFactorOrder(updated.value.factors.map((f) => f.name));
        drawHead();
      });
      if (panel.firstChild !== manageElement) replace(panel, manageElement);
      return;
    }
    if (tab === "export") {
      exportView ??= renderExport(page);
      if (panel.firstChild !== exportView.element) replace(panel, exportView.element);
      exportView.refresh();
      return;
    }
    if (!report) {
      replace(panel, h("p", { class: "hint" }, "Loading the report…"));
      return;
    }
    const focusKey = (document.activeElement as HTMLElement | null)?.dataset?.focusKey;
    const width = panel.clientWidth || 640;
    const scrollY = window.scrollY;
    if (tab === "results") replace(panel, renderResults(report, ui, width, () => drawPanel(false)));
    else replace(panel, renderRetired(report));
    // focus returns to the control the user was on, without moving the page under them
    if (focusKey) panel.querySelector<HTMLElement>(`[data-focus-key="${CSS.escape(focusKey)}"]`)?.focus({ preventScroll: true });
    if (fromPoll && Math.abs(window.scrollY - scrollY) > 1) window.scrollTo(0, scrollY);
  }

  async function load(): Promise<void> {
    // a hidden tab does not poll; it catches up as soon as it is shown again
    if (document.hidden && page !== null) {
      schedule(SLOW_POLL_MS);
      return;
    }
    const startedAt = changes;
    try {
      const [p, r] = await Promise.all([
        tagged<Page>("GET", `/pages/${encodeURIComponent(key)}`),
        api<Report>("GET", `/pages/${encodeURIComponent(key)}/report`),
      ]);
      if (disposed) return;
      // figures fetched before the user's own change landed are stale: fetch again at once
      if (startedAt !== changes) {
        schedule(0);
        return;
      }
      const firstLoad = page === null;
      page = p.value;
      pageTag = p.etag;
      report = r;
      setFactorOrder(page.factors.map((f) => f.name));
      errorLine.textContent = "";
      drawHead();
      drawTabs();
      if (firstLoad && page.demo) {
        replace(demoSlot, demoControl(page, () => {
          fastUntil = Date.now() + 60_000;
          schedule(500);
        }));
      }
      drawPanel(!firstLoad);
    } catch (error) {
      if (disposed) return;
      if (error instanceof ApiError && error.status === 404) {
        replace(main, h("div", { class: "panel" }, h("h1", null, "No such page"),
          h("p", null, `There is no page with the key “${key}”. `, h("a", { href: "#/" }, "See all pages"), ".")));
        disposed = true;
        return;
      }
      errorLine.textContent = `Could not refresh: ${(error as Error).message} Showing the last figures received.`;
    }
    schedule(Date.now() < fastUntil ? FAST_POLL_MS : SLOW_POLL_MS);
  }

  function schedule(ms: number): void {
    if (disposed) return;
    clearTimeout(timer);
    timer = window.setTimeout(load, ms);
  }

  let resizeTimer = 0;
  const onResize = () => {
    clearTimeout(resizeTimer);
    resizeTimer = window.setTimeout(() => {
      if (tab === "results") drawPanel(false);
    }, 150);
  };
  window.addEventListener("resize", onResize);
  const onVisible = () => {
    if (!document.hidden) schedule(0);
  };
  document.addEventListener("visibilitychange", onVisible);

  drawTabs();
  void load();

  return {
    update(next: Route): boolean {
      if (next.name !== "page" || next.key !== key) return false;
      const nextTab = tabIdOf(next.tab);
      if (nextTab !== tab) {
        tab = nextTab;
        drawTabs();
        drawPanel(false);
      }
      return true;
    },
    dispose() {
      disposed = true;
      clearTimeout(timer);
      window.removeEventListener("resize", onResize);
      document.removeEventListener("visibilitychange", onVisible);
    },
  };
}

function tabIdOf(value: string | undefined): TabId {
  return (tabs.find((t) => t.id === value)?.id ?? "results") as TabId;
}
