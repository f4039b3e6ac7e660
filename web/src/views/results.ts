/**
 * Results: which combination wins in each segment. An overview table of every segment, then the
 * chosen segment in full — its leader with each level's value, how sure the model is, how close the
 * segment is to settling and what stopping now would cost, the next best combinations, traffic
 * share over time, the intervals of the top combinations, each factor's effect, and the naive
 * leader-versus-baseline cross-check with its caution, and whether the model's predicted rates came
 * true (calibration.ts).
 */
import { h, type Child } from "../dom.ts";
import { allocationChart, allocationRows, allocationSeries, effectChart, effectWord, intervalChart, seriesColours } from "../charts.ts";
import { n, pct, prob, probError, ratio, rateWithInterval, segmentLabel, absoluteTime } from "../format.ts";
import type { Report, SegmentReport } from "../types.ts";
import { comboChips, combinationLevels, segmentBadge } from "./parts.ts";
import type { UiState } from "./pageView.ts";
import { calibrationCard } from "./calibration.ts";

export function renderResults(report: Report, ui: UiState, width: number, redraw: () => void): Child[] {
  const all = [...report.segments, report.pooled];
  const chosen = all.find((s) => s.segment === ui.segment) ?? report.segments[0] ?? report.pooled;
  // the width inside a panel (padding and border), so charts are drawn at their real pixel size
  const innerWidth = Math.max(240, width - (width < 560 ? 32 : 44));
  return [
    overview(report, chosen.segment, ui, redraw),
    segmentDetail(report, chosen, ui, innerWidth),
  ];
}

function overview(report: Report, chosen: string, ui: UiState, redraw: () => void): HTMLElement {
  const rows = [...report.segments, report.pooled].map((seg) => {
    const isChosen = seg.segment === chosen;
    return h(
      "tr",
      { class: isChosen ? "chosen" : null },
      h(
        "th",
        { scope: "row" },
        h(
          "button",
          {
            type: "button",
            class: "link",
            "aria-pressed": String(isChosen),
            "data-focus-key": `segment:${seg.segment}`,
            onclick: () => {
              ui.segment = seg.segment;
              redraw();
              document.getElementById("segment-detail")?.scrollIntoView({ block: "start", behavior: "smooth" });
            },
          },
          segmentLabel(seg.segment),
        ),
        isChosen ? h("span", { class: "visually-hidden" }, " (shown below)") : null,
      ),
      h("td", { "data-label": "Status" }, segmentBadge(seg.status)),
      h("td", { class: "combo-cell", "data-label": "Leader" }, seg.leader ? comboChips(seg.leader.combination) : h("span", { class: "muted" }, "not yet")),
      h("td", { class: "num", "data-label": "Chance best" }, prob(seg.leader?.probabilityBest, seg.leader?.probabilityBestError)),
      h("td", { class: "num", "data-label": "Rate" }, pct(seg.leader?.rate.mean)),
      h("td", { class: "num", "data-label": "Visitors" }, n(seg.visitors)),
    );
  });
  return h(
    "section",
    { class: "panel", "aria-labelledby": "overview-title" },
    h("h2", { id: "overview-title" }, "Leaders by segment"),
    h(
      "div",
      { class: "table-wrap" },
      h(
        "table",
        { class: "data overview stack" },
        h("caption", { class: "visually-hidden" }, "Each segment's status and leading combination; choose a segment to see it in full."),
        h(
          "thead",
          null,
          h("tr", null, h("th", { scope: "col" }, "Segment"), h("th", { scope: "col" }, "Status"), h("th", { scope: "col" }, "Leader"),
            h("th", { scope: "col", class: "num" }, "Chance best"), h("th", { scope: "col", class: "num" }, "Rate"), h("th", { scope: "col", class: "num" }, "Visitors")),
        ),
        h("tbody", null, rows),
      ),
    ),
  );
}

function segmentDetail(report: Report, seg: SegmentReport, ui: UiState, width: number): HTMLElement {
  const settings = report.settings;
  return h(
    "section",
    { class: "segment", id: "segment-detail", "aria-labelledby": "segment-title" },
    h("h2", { id: "segment-title", class: "segment-title" }, h("span", { class: "eyebrow" }, "Segment"), " ", segmentLabel(seg.segment)),
    h("div", { class: "lead-grid" }, leaderCard(seg), settleCard(seg, settings)),
    topCard(seg, width),
    allocationCard(report, seg, ui, width),
    effectsCard(seg, ui, width),
    crossCheckCard(seg),
    calibrationCard(seg, ui),
  );
}

function leaderCard(seg: SegmentReport): HTMLElement {
  const leader = seg.leader;
  if (!leader) {
    return h("div", { class: "panel leader-card" }, h("h3", null, "Leader"),
      h("p", null, "No leader yet. The first model update names one; until then visitors are spread evenly, with the baseline share on the baseline."));
  }
  return h(
    "div",
    { class: "panel leader-card", "data-testid": "leader" },
    h("h3", null, "Leader"),
    seg.folded === 0
      ? h("p", { class: "note" }, "No visits are in the model yet, so this leader and the figures below are only its starting assumptions, not evidence.")
      : null,
    combinationLevels(leader),
    h(
      "dl",
      { class: "figures" },
      h("div", null, h("dt", null, "Chance of being best"), h("dd", { class: "big" }, prob(leader.probabilityBest, leader.probabilityBestError)),
        h("dd", { class: "hint" }, probError(leader.probabilityBestError))),
      h("div", null, h("dt", null, "Conversion rate"), h("dd", { class: "big" }, pct(leader.rate.mean)),
        h("dd", { class: "hint" }, `95 % interval ${pct(leader.rate.lower)} – ${pct(leader.rate.upper)}`)),
      h("div", null, h("dt", null, "Observed"), h("dd", null, `${n(leader.visitors)} visitors · ${n(leader.conversions)} conversions`)),
    ),
    seg.baseline && seg.baseline.combination !== leader.combination
      ? h("p", { class: "hint" }, `Baseline for comparison: ${rateWithInterval(seg.baseline.rate)}, ${n(seg.baseline.visitors)} visitors.`)
      : seg.baseline ? h("p", { class: "hint" }, "The leader is the baseline combination.") : null,
  );
}

function settleCard(seg: SegmentReport, settings: Report["settings"]): HTMLElement {
  const needP = Number(settings.settleProbability ?? 0.95);
  const needLoss = Number(settings.settleLossFraction ?? 0.01);
  const p = seg.leader?.probabilityBest ?? null;
  const pError = seg.leader?.probabilityBestError ?? null;
  const leaveP = Math.min(Number(settings.unsettleProbability ?? 0.9), needP);
  const leaveLoss = Math.max(Number(settings.unsettleLossFraction ?? 0.015), needLoss);
  const lossFraction = seg.expectedLossFraction;
  const parts: Child[] = [h("h3", null, "Status ", segmentBadge(seg.status))];
  if (seg.status === "waiting") {
    parts.push(h("p", null, "Nothing has been folded into the model yet. Figures appear after the first model update that includes finished visits."));
  } else if (seg.status === "settled") {
    parts.push(
      h("p", null,
        seg.settledBy === "loss"
          ? `Settled: stopping now would cost at most ${pct(needLoss)} of the leader's conversion rate.`
          : `Settled: the leader's chance of being best reached ${prob(needP)}.`,
        ` It explores again only if the chance falls below ${prob(leaveP)} and the expected loss rises above ${pct(leaveLoss)}, so figures wavering at the bar do not switch it back and forth.`,
        keepsExploring(settings)),
    );
  } else {
    parts.push(h("p", null, "Exploring: traffic still moves between combinations as evidence comes in. A segment settles when either test below is met."));
  }
  if (seg.status !== "waiting") {
    parts.push(
      progress("Chance the leader is best", p ?? 0, needP, `${prob(p, pError)} of ${prob(needP)} needed`),
      progress(
        "Expected loss of stopping now",
        lossFraction === null ? 0 : Math.min(1, needLoss / Math.max(lossFraction, 1e-12)),
        1,
        lossFraction === null
          ? "not known yet"
          : `${pointsOf(seg.expectedLoss ?? 0, false)} of conversion rate = ${pct(lossFraction)} of the leader's rate; settles at ${pct(needLoss)}`,
      ),
    );
  }
  parts.push(h("p", { class: "hint" }, `${n(seg.folded)} of ${n(seg.visitors)} visits are in the model so far.`));
  return h("div", { class: "panel settle-card", "data-testid": "settle" }, parts);
}

function keepsExploring(settings: Report["settings"]): string {
  const floor = settings.explorationFloor;
  return typeof floor === "number" && floor > 0
    ? ` A small exploration floor (${pct(floor)}) keeps checking the others unless the page is frozen.`
    : "";
}

/** A labelled bar with the figures written out; the bar is decoration for the sentence beside it. */
function progress(label: string, value: number, target: number, words: string): HTMLElement {
  const fraction = Math.max(0, Math.min(1, value / target));
  const bar = h("span", { class: "bar-fill" });
  bar.style.width = `${(fraction * 100).toFixed(1)}%`;
  return h(
    "div",
    { class: "progress" },
    h("div", { class: "progress-label" }, h("span", null, label), h("span", { class: "progress-words" }, words)),
    h("span", { class: "bar-track", "aria-hidden": "true" }, bar,
      h("span", { class: "bar-target" })),
  );
}

function topCard(seg: SegmentReport, width: number): HTMLElement {
  const top = seg.top;
  if (top.length === 0) return h("div");
  const leaderKey = seg.leader?.combination ?? null;
  const rows = top.map((c, i) =>
    h(
      "tr",
      { class: c.combination === leaderKey ? "is-leader" : null },
      h("td", { class: "num rank-cell", "data-label": "#" }, String(i + 1), c.combination === leaderKey ? h("span", { class: "tag" }, "leader") : null),
      h("td", { class: "combo-cell", "data-label": "Combination" }, comboChips(c.combination)),
      h("td", { class: "num", "data-label": "Chance best" }, prob(c.probabilityBest, c.probabilityBestError)),
      h("td", { class: "num", "data-label": "Rate" }, pct(c.rate.mean)),
      h("td", { class: "num nowrap", "data-label": "95 % interval" }, `${pct(c.rate.lower)} – ${pct(c.rate.upper)}`),
      h("td", { class: "num", "data-label": "Visitors" }, n(c.visitors)),
      h("td", { class: "num", "data-label": "Conversions" }, n(c.conversions)),
    ),
  );
  return h(
    "section",
    { class: "panel", "aria-labelledby": "top-title" },
    h("h3", { id: "top-title" }, "The leader and the next best combinations"),
    h("p", { class: "hint" }, "Rates are the model's estimates with 95 % intervals; the diamond is the leader. Numbers match the table below."),
    h("figure", { class: "chart-box" }, intervalChart(top, leaderKey, width),
      h("figcaption", { class: "visually-hidden" }, "Conversion rate intervals; the same figures are in the table below.")),
    h(
      "div",
      { class: "table-wrap" },
      h(
        "table",
        { class: "data stack" },
        h("caption", { class: "visually-hidden" }, "Top combinations in this segment, best first"),
        h("thead", null, h("tr", null,
          h("th", { scope: "col", class: "num" }, "#"), h("th", { scope: "col" }, "Combination"), h("th", { scope: "col", class: "num" }, "Chance best"),
          h("th", { scope: "col", class: "num" }, "Rate"), h("th", { scope: "col", class: "num" }, "95 % interval"),
          h("th", { scope: "col", class: "num" }, "Visitors"), h("th", { scope: "col", class: "num" }, "Conv."))),
        h("tbody", null, rows),
      ),
    ),
  );
}

/** A <details> whose open state lives in the view's state, so a refresh does not close it. */
export function panelDetails(ui: UiState, id: string, summary: string, ...content: Child[]): HTMLElement {
  const details = h("details", { class: "more", "data-panel": id, open: ui.open.has(id) }, h("summary", { "data-focus-key": `panel:${id}` }, summary), content);
  details.addEventListener("toggle", () => {
    if (details.open) ui.open.add(id);
    else ui.open.delete(id);
  });
  return details;
}

function allocationCard(report: Report, seg: SegmentReport, ui: UiState, width: number): HTMLElement {
  const points = report.allocationHistory[seg.segment] ?? [];
  const series = allocationSeries(points);
  const rows = allocationRows(points, series);
  const legend = h(
    "ol",
    { class: "legend" },
    series.map((key, i) => {
      const sw = h("span", { class: "swatch", "aria-hidden": "true" });
      sw.style.backgroundColor = seriesColours[i % seriesColours.length];
      const now = rows.length ? rows[rows.length - 1].shares[i] : 0;
      return h("li", null, h("span", { class: "legend-n" }, String(i + 1)), sw, comboChips(key), h("span", { class: "legend-share" }, pct(now, 1)));
    }),
    points.length ? h("li", null, h("span", { class: "legend-n" }, "…"), h("span", { class: "swatch other", "aria-hidden": "true" }), h("span", { class: "muted" }, "all other combinations"),
      h("span", { class: "legend-share" }, pct(rows[rows.length - 1].shares[series.length], 1))) : null,
  );
  const table = h(
    "table",
    { class: "data" },
    h("caption", { class: "visually-hidden" }, "Traffic share per combination at each model update"),
    h("thead", null, h("tr", null, h("th", { scope: "col" }, "Update"), series.map((_, i) => h("th", { scope: "col", class: "num" }, `#${i + 1}`)), h("th", { scope: "col", class: "num" }, "others"))),
    h("tbody", null, points.map((p, i) => h("tr", null, h("th", { scope: "row", class: "nowrap" }, `${p.version} · ${absoluteTime(p.at)}`), rows[i].shares.map((v) => h("td", { class: "num" }, pct(v, 1)))))),
  );
  return h(
    "section",
    { class: "panel", "aria-labelledby": "alloc-title" },
    h("h3", { id: "alloc-title" }, "Where the traffic goes"),
    points.length === 0
      ? h("p", { class: "hint" }, "No model updates yet, so traffic is still spread evenly.")
      : [
          h("p", { class: "hint" }, "Share of this segment's visitors sent to each combination after every model update. Bands are numbered at their right edge."),
          h("figure", { class: "chart-box" }, allocationChart(points, series, width)),
          legend,
          panelDetails(ui, `alloc-table:${seg.segment}`, "Show the shares as a table", h("div", { class: "table-wrap" }, table)),
        ],
  );
}

function effectsCard(seg: SegmentReport, ui: UiState, width: number): HTMLElement {
  if (seg.effects.length === 0) return h("div");
  const columns = Math.max(1, Math.min(seg.effects.length, Math.floor((width + 24) / 344)));
  const chartWidth = Math.floor((width - 24 * (columns - 1)) / columns);
  const grid = h(
    "div",
    { class: "effects" },
    seg.effects.map((effect) =>
      h(
        "figure",
        { class: "effect" },
        h("figcaption", null, h("strong", null, effect.factor)),
        effectChart(effect, chartWidth),
        h("ul", { class: "effect-words" },
          effect.levels.map((l) => h("li", null, h("strong", null, l.level), `: ${effectText(l)}`))),
      ),
    ),
  );
  grid.style.gridTemplateColumns = `repeat(${columns}, minmax(0, 1fr))`;
  return h(
    "section",
    { class: "panel", "aria-labelledby": "effects-title" },
    h("h3", { id: "effects-title" }, "What each factor does"),
    h("p", { class: "hint" }, "Switching a factor from its first level to another changes the conversion rate by this much, in percentage points with 95 % intervals: right of the line helps, left hurts. Averaged over every allowed setting of the other factors and over what the model is still unsure of; a level can still work better with some partners than with others."),
    grid,
    seg.segmentSpread === null ? null : h("p", { class: "hint", "data-testid": "segment-spread" },
      `Traffic sources differ: a level's effect in one source strays from its effect over all sources by about ±${seg.segmentSpread.toFixed(2)} in log-odds (×${ratio(Math.exp(-seg.segmentSpread))}–×${ratio(Math.exp(seg.segmentSpread))} in odds), as learned from every source's data at the last update.`),
    panelDetails(ui, "effects-odds", "Odds ratios with the other factors at their first level", h("ul", { class: "effect-words" },
      seg.effects.flatMap((effect) => effect.levels.map((l) => h("li", null, h("strong", null, `${effect.factor} ${l.level}`),
        `: ×${ratio(l.oddsRatioAtFirstLevels.estimate)} (95 % interval ${ratio(l.oddsRatioAtFirstLevels.lower)}–${ratio(l.oddsRatioAtFirstLevels.upper)})`)))),
      h("p", { class: "hint" }, "The model's own coefficients: how the level changes the odds of converting when every other factor is at its first level. Unlike the figures above they leave out how the level works with the other factors' other levels.")),
  );
}

/** "helps: +6.4 points (4.8 to 8.0), +28 % relative" for one level's average effect, to the precision its interval supports. */
function effectText(l: SegmentReport["effects"][number]["levels"][number]): string {
  const d = l.difference;
  if (!d || !l.relative) return "never shown together with the first level, so it cannot be compared";
  const digits = (d.upper - d.lower) * 100 >= 1 ? 1 : 2;
  const pts = (v: number) => `${v > 0 ? "+" : v < 0 ? "−" : ""}${Math.abs(v * 100).toFixed(digits)}`;
  const rel = l.relative.mean * 100;
  return `${effectWord(d)}: ${pts(d.mean)} points (95 % interval ${pts(d.lower)} to ${pts(d.upper)}), ${rel > 0 ? "+" : rel < 0 ? "−" : ""}${Math.abs(rel).toFixed(Math.abs(rel) >= 10 ? 0 : 1)} % relative`;
}

function crossCheckCard(seg: SegmentReport): HTMLElement {
  const c = seg.crossCheck;
  if (!c) {
    return h("section", { class: "panel", "aria-labelledby": "cc-title" }, h("h3", { id: "cc-title" }, "Naive cross-check"),
      h("p", { class: "hint" }, "Shown once the leader differs from the baseline and both have been served."));
  }
  const lift = c.lift;
  return h(
    "section",
    { class: "panel crosscheck", "aria-labelledby": "cc-title" },
    h("h3", { id: "cc-title" }, "Naive cross-check: leader against baseline"),
    h("p", { class: "caution" }, h("span", { class: "caution-mark", "aria-hidden": "true" }, "!"), h("span", null, h("strong", null, "Caution: "), c.warning)),
    h(
      "dl",
      { class: "figures small" },
      h("div", null, h("dt", null, "Leader, as served"), h("dd", null, `${n(c.leader.conversions)} of ${n(c.leader.visitors)} (${pct(c.leader.visitors ? c.leader.conversions / c.leader.visitors : null)})`)),
      h("div", null, h("dt", null, "Baseline, as served"), h("dd", null, `${n(c.baseline.conversions)} of ${n(c.baseline.visitors)} (${pct(c.baseline.visitors ? c.baseline.conversions / c.baseline.visitors : null)})`)),
      h("div", null, h("dt", null, "Difference"), h("dd", null, `${pointsOf(lift.absolute.estimate)} (95 % CI ${pointsOf(lift.absolute.lower, true, false)} to ${pointsOf(lift.absolute.upper, true, false)})`)),
      h("div", null, h("dt", null, "Relative lift"), h("dd", null, `${signed(lift.relative.estimate)} (95 % CI ${signed(lift.relative.lower)} to ${signed(lift.relative.upper)})`)),
      h("div", null, h("dt", null, "Two-proportion z-test"), h("dd", null, `z = ${c.zTest.z.toFixed(2)}, p ${pValue(c.zTest.pValue)}`)),
      h("div", null, h("dt", null, "Fisher exact test"), h("dd", null, `p ${pValue(c.fisher.twoSided)} (two-sided)`)),
    ),
    lift.absolute.method || lift.relative.method
      ? h("p", { class: "hint" }, `Intervals: ${[lift.absolute.method, lift.relative.method].filter(Boolean).join("; ")}.`)
      : null,
  );
}

function signed(v: number): string {
  const s = pct(v);
  return v > 0 ? `+${s}` : s.replace("-", "−");
}

/** A difference of two rates in percentage points. */
function pointsOf(v: number, sign = true, unit = true): string {
  const digits = Math.abs(v) >= 0.01 ? 2 : 3;
  const text = `${Math.abs(v * 100).toFixed(digits)}${unit ? " percentage points" : ""}`;
  return !sign || v === 0 ? text : v > 0 ? `+${text}` : `−${text}`;
}

/** "= 0.031" or "< 0.0001", to follow a "p". */
function pValue(p: number): string {
  return p < 0.0001 ? "< 0.0001" : `= ${p.toFixed(p < 0.01 ? 4 : 3)}`;
}
