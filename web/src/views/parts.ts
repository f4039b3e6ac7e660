/** Small pieces several views draw: status words with their symbols, and a combination's levels. */
import { asColour, h } from "../dom.ts";
import { keyParts } from "../format.ts";
import type { CombinationReport, PageStatus } from "../types.ts";

const pageStatusWords: Record<PageStatus, [string, string]> = {
  active: ["▶", "Learning"],
  paused: ["❚❚", "Paused"],
  frozen: ["■", "Frozen"],
};

/** Status as a symbol plus a word, so colour never carries it alone. */
export function statusBadge(status: PageStatus): HTMLElement {
  const [symbol, word] = pageStatusWords[status] ?? ["?", status];
  return h("span", { class: `badge status-${status}` }, h("span", { "aria-hidden": "true" }, symbol), " ", word);
}

export function segmentBadge(status: "waiting" | "exploring" | "settled"): HTMLElement {
  const words = { waiting: ["○", "Waiting for data"], exploring: ["◐", "Exploring"], settled: ["●", "Settled"] }[status];
  return h("span", { class: `badge seg-${status}` }, h("span", { "aria-hidden": "true" }, words[0]), " ", words[1]);
}

/** A level's value: colours get a swatch beside the text; everything else is the text itself. */
export function levelValue(value: string | null | undefined): HTMLElement {
  if (value === null || value === undefined || value === "") return h("span", { class: "muted" }, "(no value)");
  const colour = asColour(value);
  const swatch = colour ? h("span", { class: "swatch", "aria-hidden": "true" }) : null;
  if (swatch && colour) swatch.style.backgroundColor = colour;
  return h("span", { class: "value" }, swatch, value);
}

/** The levels of a combination as a definition list: factor — level — value. */
export function combinationLevels(combo: CombinationReport): HTMLElement {
  const rows = Object.entries(combo.levels).map(([factor, { level, value }]) =>
    h("div", { class: "lv" }, h("dt", null, factor), h("dd", null, h("strong", null, level), " ", levelValue(value))),
  );
  return h("dl", { class: "levels" }, rows);
}

/** A combination key as compact chips, one per factor: "headline: question". */
export function comboChips(key: string): HTMLElement {
  if (key === "other") return h("span", { class: "muted" }, "all other combinations");
  return h(
    "span",
    { class: "chips" },
    keyParts(key).map(([factor, level]) => h("span", { class: "chip" }, h("span", { class: "chip-f" }, factor), " ", level)),
  );
}
