/**
 * Retired combinations per segment: what was pruned, the reason in plain words, the figures the
 * decision rested on, and when — plus any that forgetting brought back, with that reason too.
 */
import { h, type Child } from "../dom.ts";
import { absoluteTime, pct, prob, retiredReason, segmentLabel, when } from "../format.ts";
import type { Report, RetiredReport } from "../types.ts";
import { comboChips } from "./parts.ts";

/** Combinations currently retired (not brought back), over all segments and the pooled model. */
export function retiredCount(report: Report): number {
  return [...report.segments, report.pooled].reduce((sum, seg) => sum + seg.retired.filter((r) => !r.reinstatedAt).length, 0);
}

export function renderRetired(report: Report): Child[] {
  const segments = [...report.segments, report.pooled].filter((seg) => seg.retired.length > 0);
  const floor = report.settings.retireProbability;
  const intro = h(
    "section",
    { class: "panel" },
    h("h2", null, "Retired combinations"),
    h("p", null,
      `A combination is retired from a segment (no longer shown to that segment's visitors) when its chance of being best stays below ${prob(typeof floor === "number" ? floor : 0.001)} ` +
      `for ${report.settings.retireAfterFolds ?? 3} model updates in a row and its best plausible rate is below the leader's worst plausible rate. ` +
      "Retiring saves the visitors it would otherwise cost. With forgetting switched on, a retired combination can come back when the evidence ages."),
  );
  if (segments.length === 0) {
    return [intro, h("p", { class: "panel hint", "data-testid": "no-retired" }, "Nothing has been retired yet.")];
  }
  return [
    intro,
    segments.map((seg) =>
      h(
        "section",
        { class: "panel", "aria-label": `Retired in ${segmentLabel(seg.segment)}` },
        h("h3", null, segmentLabel(seg.segment), h("span", { class: "muted" }, ` · ${seg.retired.filter((r) => !r.reinstatedAt).length} retired`)),
        h("ul", { class: "retired-list" }, seg.retired.map((entry) => retiredItem(entry, floor))),
      ),
    ),
  ];
}

function retiredItem(entry: RetiredReport, floor: number | null | undefined): HTMLElement {
  const f = entry.figures;
  return h(
    "li",
    { class: entry.reinstatedAt ? "retired-item reinstated" : "retired-item", "data-testid": "retired-item" },
    h("div", { class: "retired-head" }, comboChips(entry.combination),
      h("span", { class: "badge" }, h("span", { "aria-hidden": "true" }, entry.reinstatedAt ? "↺" : "✕"), entry.reinstatedAt ? " Brought back" : " Retired")),
    h("p", null, retiredReason(entry, typeof floor === "number" ? floor : null)),
    h(
      "dl",
      { class: "figures small" },
      h("div", null, h("dt", null, "Chance of being best"), h("dd", null, prob(f.probabilityBest))),
      h("div", null, h("dt", null, "Its best plausible rate"), h("dd", null, pct(f.upper))),
      h("div", null, h("dt", null, "Leader's worst plausible rate"), h("dd", null, pct(f.leaderLower))),
      h("div", null, h("dt", null, "Updates in a row below the floor"), h("dd", null, String(f.folds))),
      h("div", { class: "wide" }, h("dt", null, "Leader at the time"), h("dd", null, comboChips(f.leader))),
      h("div", null, h("dt", null, "Retired"), h("dd", null, h("time", { datetime: entry.retiredAt, title: absoluteTime(entry.retiredAt) }, `${when(entry.retiredAt)} · ${absoluteTime(entry.retiredAt)}`))),
      entry.reinstatedAt
        ? h("div", null, h("dt", null, "Brought back"), h("dd", null, `${when(entry.reinstatedAt)}${entry.reinstateReason ? ` — ${entry.reinstateReason}` : ""}`))
        : null,
    ),
  );
}
