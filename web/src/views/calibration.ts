/**
 * "Did the predictions come true?": prequential calibration in plain words. Each visit is scored
 * with the conversion rate the model predicted when it served the page, once the visit's
 * attribution window has closed; visits are grouped into bands of equal size by that prediction,
 * each beside the rate that happened and its 95% range. Below the minimum the card says so and
 * draws no bands. The figures are the server's (src/model/calibration.ts).
 */
import { h } from "../dom.ts";
import { n, pct } from "../format.ts";
import type { SegmentReport } from "../types.ts";
import type { UiState } from "./pageView.ts";
import { panelDetails } from "./results.ts";

export function calibrationCard(seg: SegmentReport, ui: UiState): HTMLElement {
  const c = seg.calibration;
  const title = h("h3", { id: "cal-title" }, "Did the predictions come true?");
  if (!c.enough) {
    return h("section", { class: "panel", "aria-labelledby": "cal-title" }, title,
      h("p", { class: "hint" },
        `Too little data to judge yet: ${n(c.picks)} visits with a finished attribution window and ${n(c.conversions)} conversions among them. ` +
        `The check needs at least ${n(c.needs.picks)} such visits and ${n(c.needs.conversions)} conversions.`));
  }
  const skill = c.logLossSkill ?? 0;
  const verdict = skill > 0
    ? `The model's predictions told visitors apart ${pct(skill, 1)} better than one rate of ${pct(c.observedRate)} for everyone would have (log-loss skill).`
    : `The model's predictions were no better than one rate of ${pct(c.observedRate)} for everyone (log-loss skill ${pct(skill, 1)}).`;
  const rows = c.bins.map((b) => {
    const inside = b.predicted >= b.lower && b.predicted <= b.upper;
    return h("tr", null,
      h("th", { scope: "row", class: "nowrap" }, b.from === b.to ? pct(b.from) : `${pct(b.from)} – ${pct(b.to)}`),
      h("td", { class: "num", "data-label": "Visits" }, n(b.picks)),
      h("td", { class: "num", "data-label": "Predicted" }, pct(b.predicted)),
      h("td", { class: "num", "data-label": "Happened" }, `${pct(b.observed)} (${pct(b.lower)} – ${pct(b.upper)})`),
      h("td", { "data-label": "Agrees" }, inside ? "✓ within the range" : "✗ outside the range"));
  });
  return h("section", { class: "panel", "aria-labelledby": "cal-title" }, title,
    h("p", { class: "hint" },
      `Each of ${n(c.picks)} visits (${n(c.conversions)} conversions) is scored with the conversion rate the model predicted when it showed the page, ` +
      `once the visit's attribution window had closed. ${verdict}`),
    panelDetails(ui, `calibration:${seg.segment}`, "Show predicted against actual rates",
      h("div", { class: "table-wrap" }, h("table", { class: "data stack" },
        h("caption", { class: "visually-hidden" }, "Predicted and actual conversion rates, visits in bands of equal size by prediction"),
        h("thead", null, h("tr", null, h("th", { scope: "col" }, "Predicted band"), h("th", { scope: "col", class: "num" }, "Visits"),
          h("th", { scope: "col", class: "num" }, "Predicted"), h("th", { scope: "col", class: "num" }, "Happened (95 % range)"),
          h("th", { scope: "col" }, "Agrees"))),
        h("tbody", null, rows))),
      h("p", { class: "hint" },
        `Bands hold equal numbers of visits. The range is the Wilson 95 % interval of the rate that happened; a prediction outside it is off by more than chance explains. ` +
        `Log loss ${c.logLoss!.toFixed(4)}; Brier score ${c.brier!.toFixed(4)}, skill ${pct(c.brierSkill, 1)} against the single rate.`)),
  );
}
