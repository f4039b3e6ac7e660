/**
 * Charts drawn as SVG from the report's own numbers: allocation over time (stacked shares), the
 * 95 % intervals of the top combinations, and each factor's average level effects in percentage points. Each
 * chart is drawn at the pixel width of its container so text stays readable on a phone, carries
 * numbers or words on the marks themselves (colour is never the only carrier), and has a text
 * equivalent: an aria description here and a table beside it in the view.
 */
import { s } from "./dom.ts";
import { comboShort, pct } from "./format.ts";
import type { AllocationPoint, CombinationReport, FactorEffect } from "./types.ts";

/** Series colours: distinct in hue and lightness; bands also carry their number as text. */
export const seriesColours = ["#2f6f73", "#c7843c", "#5b5f97", "#8a9a3a", "#a8536b", "#3f86b8", "#9b8f80"];

const FONT = 12;

function svgRoot(width: number, height: number, label: string): SVGElement {
  return s("svg", {
    viewBox: `0 0 ${width} ${height}`,
    width,
    height,
    role: "img",
    "aria-label": label,
    class: "chart",
    focusable: "false",
  });
}

function text(x: number, y: number, content: string, attrs: Record<string, string | number> = {}): SVGElement {
  return s("text", { x, y, "font-size": FONT, ...attrs }, content);
}

/** The series shown in an allocation chart: the combinations holding most traffic now, then "other". */
export function allocationSeries(points: AllocationPoint[], limit = 6): string[] {
  const last = points[points.length - 1];
  if (!last) return [];
  const ranked = Object.entries(last.shares)
    .filter(([key]) => key !== "other")
    .sort((a, b) => b[1] - a[1])
    .map(([key]) => key);
  return ranked.slice(0, limit);
}

/** Shares per point for the chosen series; everything else is summed into "other". */
export function allocationRows(points: AllocationPoint[], series: string[]): { at: string; shares: number[] }[] {
  return points.map((p) => {
    const shares = series.map((key) => p.shares[key] ?? 0);
    const rest = Math.max(0, 1 - shares.reduce((a, b) => a + b, 0));
    return { at: p.at, shares: [...shares, rest] };
  });
}

export function allocationChart(points: AllocationPoint[], series: string[], width: number): SVGElement {
  const height = 220;
  const left = 40;
  const right = 34;
  const top = 10;
  const bottom = 28;
  const plotW = Math.max(60, width - left - right);
  const plotH = height - top - bottom;
  const rows = allocationRows(points, series);
  const times = rows.map((r) => Date.parse(r.at));
  const t0 = times[0] ?? 0;
  const t1 = times[times.length - 1] ?? 1;
  const span = t1 - t0 || 1;
  const x = (i: number) => left + (rows.length === 1 ? plotW : ((times[i] - t0) / span) * plotW);
  const y = (share: number) => top + plotH * (1 - share);
  const leaderShare = rows.length ? rows[rows.length - 1].shares[0] : 0;
  const svg = svgRoot(
    width,
    height,
    series.length
      ? `Share of traffic per combination over ${rows.length} model updates. Now: ` +
          series.map((key, i) => `${i + 1}. ${comboShort(key)} ${pct(rows[rows.length - 1].shares[i], 1)}`).join("; ") +
          `. Largest share now ${pct(leaderShare, 1)}.`
      : "No allocation history yet.",
  );
  // grid and axis
  for (const g of [0, 0.25, 0.5, 0.75, 1]) {
    svg.appendChild(s("line", { x1: left, x2: left + plotW, y1: y(g), y2: y(g), class: "grid" }));
    svg.appendChild(text(left - 6, y(g) + 4, `${g * 100}%`, { "text-anchor": "end", class: "axis" }));
  }
  if (rows.length === 0) return svg;
  const singlePoint = rows.length === 1;
  // stacked bands, bottom = series 0 (the largest share now)
  const base = rows.map(() => 0);
  const nSeries = series.length + 1;
  for (let k = 0; k < nSeries; k += 1) {
    const lower = base.slice();
    const upper = rows.map((r, i) => base[i] + r.shares[k]);
    const xs = singlePoint ? [left, left + plotW] : rows.map((_, i) => x(i));
    const up = singlePoint ? [upper[0], upper[0]] : upper;
    const lo = singlePoint ? [lower[0], lower[0]] : lower;
    const path =
      xs.map((xx, i) => `${i ? "L" : "M"}${xx.toFixed(1)},${y(up[i]).toFixed(1)}`).join(" ") +
      " " +
      xs.map((_, i) => xs.length - 1 - i).map((i) => `L${xs[i].toFixed(1)},${y(lo[i]).toFixed(1)}`).join(" ") +
      " Z";
    const colour = k < series.length ? seriesColours[k % seriesColours.length] : "#d9d4ca";
    svg.appendChild(s("path", { d: path, fill: colour, class: "band" }));
    // the band's number at its right end, when it is tall enough to hold it
    const lastUp = up[up.length - 1];
    const lastLo = lo[lo.length - 1];
    if (y(lastLo) - y(lastUp) >= FONT + 2) {
      svg.appendChild(
        text(left + plotW + 6, (y(lastUp) + y(lastLo)) / 2 + 4, k < series.length ? String(k + 1) : "…", { class: "band-label" }),
      );
    }
    for (let i = 0; i < rows.length; i += 1) base[i] = upper[i];
  }
  // time axis: first and last update
  const fmt = (t: number) => new Date(t).toLocaleTimeString("en-GB", { hour: "2-digit", minute: "2-digit" });
  svg.appendChild(text(left, height - 8, fmt(t0), { class: "axis" }));
  svg.appendChild(text(left + plotW, height - 8, singlePoint ? "now" : fmt(t1), { class: "axis", "text-anchor": "end" }));
  return svg;
}

/** Dot-and-whisker rows: each combination's posterior mean rate and 95 % interval, leader marked. */
export function intervalChart(combos: CombinationReport[], leaderKey: string | null, width: number): SVGElement {
  const rowH = 26;
  const left = 34;
  const right = 16;
  const top = 8;
  const axisH = 24;
  const height = top + combos.length * rowH + axisH;
  const plotW = Math.max(60, width - left - right);
  const maxRate = Math.max(0.001, ...combos.map((c) => c.rate.upper)) * 1.08;
  const x = (r: number) => left + (r / maxRate) * plotW;
  const svg = svgRoot(
    width,
    height,
    `Conversion rate with 95 % interval for the top ${combos.length} combinations: ` +
      combos.map((c, i) => `${i + 1}. ${comboShort(c.combination)} ${pct(c.rate.mean)} (${pct(c.rate.lower)} to ${pct(c.rate.upper)})`).join("; "),
  );
  const ticks = niceTicks(maxRate, Math.max(2, Math.floor(plotW / 90)));
  for (const t of ticks) {
    svg.appendChild(s("line", { x1: x(t), x2: x(t), y1: top, y2: top + combos.length * rowH, class: "grid" }));
    svg.appendChild(text(x(t), height - 6, pct(t, t < 0.1 ? 1 : 0), { "text-anchor": "middle", class: "axis" }));
  }
  combos.forEach((c, i) => {
    const cy = top + i * rowH + rowH / 2;
    const isLeader = c.combination === leaderKey;
    svg.appendChild(text(left - 8, cy + 4, String(i + 1), { "text-anchor": "end", class: isLeader ? "rank leader" : "rank" }));
    svg.appendChild(s("line", { x1: x(c.rate.lower), x2: x(c.rate.upper), y1: cy, y2: cy, class: isLeader ? "whisker leader" : "whisker" }));
    for (const end of [c.rate.lower, c.rate.upper]) {
      svg.appendChild(s("line", { x1: x(end), x2: x(end), y1: cy - 5, y2: cy + 5, class: isLeader ? "whisker leader" : "whisker" }));
    }
    // the leader is a diamond, the others circles: shape, not only colour
    if (isLeader) {
      const cx = x(c.rate.mean);
      svg.appendChild(s("path", { d: `M${cx},${cy - 7} L${cx + 7},${cy} L${cx},${cy + 7} L${cx - 7},${cy} Z`, class: "dot leader" }));
    } else {
      svg.appendChild(s("circle", { cx: x(c.rate.mean), cy, r: 5, class: "dot" }));
    }
  });
  return svg;
}

/** Average effects in percentage points around 0 (no effect), one row per level, the reference level at 0. */
export function effectChart(effect: FactorEffect, width: number): SVGElement {
  const rowH = 24;
  const labelW = Math.min(150, Math.floor(width * 0.34));
  const right = 14;
  const top = 6;
  const axisH = 22;
  const rows = [
    { level: effect.reference, d: { mean: 0, lower: 0, upper: 0 }, reference: true },
    ...effect.levels.map((l) => ({ level: l.level, d: l.difference, reference: false })),
  ];
  const height = top + rows.length * rowH + axisH;
  const plotW = Math.max(60, width - labelW - right);
  const lim = 1.1 * Math.max(0.001, ...rows.flatMap((r) => (r.d ? [Math.abs(r.d.lower), Math.abs(r.d.upper)] : [])).filter(Number.isFinite));
  const x = (v: number) => labelW + ((Math.max(-lim, Math.min(lim, v)) + lim) / (2 * lim)) * plotW;
  const svg = svgRoot(
    width,
    height,
    `Change in conversion rate from switching ${effect.factor} from ${effect.reference} to each level, in percentage points with 95 % intervals: ` +
      effect.levels.map((l) => (l.difference
        ? `${l.level} ${points(l.difference.mean)} (${points(l.difference.lower)} to ${points(l.difference.upper)}), ${effectWord(l.difference)}`
        : `${l.level} not comparable`)).join("; "),
  );
  svg.appendChild(s("line", { x1: x(0), x2: x(0), y1: top, y2: top + rows.length * rowH, class: "axis-one" }));
  for (const t of [-lim, 0, lim]) {
    svg.appendChild(text(x(t), height - 6, points(t), { "text-anchor": t === 0 ? "middle" : t < 0 ? "start" : "end", class: "axis" }));
  }
  rows.forEach((r, i) => {
    const cy = top + i * rowH + rowH / 2;
    svg.appendChild(text(labelW - 8, cy + 4, clip(r.level, labelW - 12), { "text-anchor": "end", class: "rank" }));
    if (r.reference || !r.d) {
      svg.appendChild(text(x(0) + 8, cy + 4, r.reference ? "reference" : "not comparable", { class: "axis" }));
      svg.appendChild(s("circle", { cx: x(0), cy, r: 4, class: "dot ref" }));
      return;
    }
    svg.appendChild(s("line", { x1: x(r.d.lower), x2: x(r.d.upper), y1: cy, y2: cy, class: "whisker" }));
    svg.appendChild(s("circle", { cx: x(r.d.mean), cy, r: 5, class: `dot effect-${effectWord(r.d)}` }));
  });
  return svg;
}

/** A difference of rates as signed percentage points: "+1.2 pt". */
function points(v: number): string {
  const p = v * 100;
  if (p === 0) return "0 pt";
  const digits = Math.abs(p) >= 10 ? 0 : Math.abs(p) >= 1 ? 1 : 2;
  return `${p > 0 ? "+" : p < 0 ? "−" : ""}${Math.abs(p).toFixed(digits)} pt`;
}

/** Plain reading of an effect interval (a difference of rates): it helps or hurts only when the whole interval says so. */
export function effectWord(l: { lower: number; upper: number }): "helps" | "hurts" | "unclear" {
  return l.lower > 0 ? "helps" : l.upper < 0 ? "hurts" : "unclear";
}

function clip(label: string, px: number): string {
  const max = Math.max(4, Math.floor(px / 7));
  return label.length > max ? `${label.slice(0, max - 1)}…` : label;
}

function niceTicks(max: number, count: number): number[] {
  const raw = max / count;
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 2.5, 5, 10].map((m) => m * mag).find((st) => st >= raw) ?? raw;
  const out: number[] = [];
  for (let t = 0; t <= max + 1e-12; t += step) out.push(Number(t.toPrecision(6)));
  return out;
}
