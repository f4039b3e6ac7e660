/**
 * Retired combinations per segment: what was pruned, the reason in plain words, the figures the
 * decision rested on, and when — plus any that forgetting brought back, with that reason too.
 */
import { h, type Child } from "../dom.ts";
import { absoluteTime, prob, retiredReason, segmentLabel, when } from "../format.ts";
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
    segments.map((seg) => {
      const entries = [...seg.retired].sort((a, b) => Date.parse(b.retiredAt) - Date.parse(a.retiredAt));
      const leaders = new Set(entries.map((e) => e.figures.leader));
      const sharedLeader = leaders.size === 1 ? entries[0].figures.leader : null;
      return h(
        "section",
        { class: "panel", "aria-label": `Retired in ${segmentLabel(seg.segment)}` },
        h("h3", null, segmentLabel(seg.segment), h("span", { class: "muted" }, ` · ${seg.retired.filter((r) => !r.reinstatedAt).length} retired`)),
        sharedLeader ? h("p", { class: "hint" }, "Each was compared with the leader at the time: ", comboChips(sharedLeader)) : null,
        h(
          "div",
          { class: "table-wrap" },
          h(
            "table",
            { class: "data stack retired-table" },
            h("caption", { class: "visually-hidden" }, `Combinations retired in ${segmentLabel(seg.segment)}, newest first`),
            h("thead", null, h("tr", null, h("th", { scope: "col" }, "Combination"), h("th", { scope: "col" }, "Why, in plain words"), h("th", { scope: "col" }, "When"))),
            h("tbody", null, entries.map((entry) => retiredRow(entry, floor, sharedLeader === null))),
          ),
        ),
      );
    }),
  ];
}

function retiredRow(entry: RetiredReport, floor: number | null | undefined, showLeader: boolean): HTMLElement {
  return h(
    "tr",
    { class: entry.reinstatedAt ? "reinstated" : null, "data-testid": "retired-item" },
    h("td", { class: "combo-cell", "data-label": "Combination" }, comboChips(entry.combination),
      entry.reinstatedAt ? h("span", { class: "tag" }, "↺ brought back") : null),
    h("td", { class: "wide", "data-label": "Why" },
      h("span", null, retiredReason(entry, typeof floor === "number" ? floor : null)),
      showLeader ? h("span", { class: "hint" }, " Leader then: ", comboChips(entry.figures.leader)) : null,
      entry.reinstatedAt
        ? h("span", { class: "hint" }, ` Brought back ${when(entry.reinstatedAt)}${entry.reinstateReason ? `: ${entry.reinstateReason}` : "."}`)
        : null),
    h("td", { class: "nowrap", "data-label": "When" },
      h("time", { datetime: entry.retiredAt, title: absoluteTime(entry.retiredAt) }, when(entry.retiredAt)),
      h("span", { class: "hint when-abs" }, absoluteTime(entry.retiredAt))),
  );
}
