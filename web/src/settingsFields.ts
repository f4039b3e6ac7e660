/**
 * The page settings the console offers, with the words a marketer needs beside each. Names follow
 * the page settings API; the defaults shown as placeholders come from the server (GET /session),
 * which also validates, and its message is shown as is.
 */
import { api } from "./api.ts";
import { h, uid } from "./dom.ts";
import { pct } from "./format.ts";
import type { SessionInfo, Settings } from "./types.ts";

interface Field {
  name: string;
  label: string;
  unit: "hours" | "seconds" | "days" | "share" | "scale" | "count" | "log-odds";
  help: string;
  advanced?: boolean;
}

export const settingFields: Field[] = [
  { name: "attributionWindowHours", label: "Attribution window", unit: "hours",
    help: "A conversion counts when it is reported within this many hours of the visit." },
  { name: "explorationFloor", label: "Exploration floor", unit: "share",
    help: "Share of traffic always spread over every combination still in play, so nothing is written off too early." },
  { name: "thompsonScale", label: "Exploration strength", unit: "scale",
    help: "How boldly traffic is tried on combinations that might be best: 1 = in proportion to their chance of being best (plain Thompson sampling), lower = more traffic to the current favourites.", advanced: true },
  { name: "baselineShare", label: "Baseline share", unit: "share",
    help: "Share of traffic kept on the baseline combination, to measure real lift against it." },
  { name: "settleProbability", label: "Settle when the leader's chance of being best reaches", unit: "share",
    help: "A segment settles once its leader is this likely to be the best combination…" },
  { name: "settleLossFraction", label: "…or when the expected loss falls to", unit: "share",
    help: "…or once stopping now would cost at most this fraction of the leader's conversion rate." },
  { name: "unsettleProbability", label: "A settled segment explores again when the chance falls below", unit: "share",
    help: "Lower than the settle bar, so a figure wavering around that bar does not switch the segment back and forth…", advanced: true },
  { name: "unsettleLossFraction", label: "…and the expected loss rises above", unit: "share",
    help: "…and higher than the settle bar for the loss, for the same reason.", advanced: true },
  { name: "halfLifeDays", label: "Forget old evidence with a half-life of", unit: "days",
    help: "Leave empty to keep all evidence. With a half-life, older visits weigh less so a changing audience is explored again." },
  { name: "assignmentHours", label: "Keep a visitor on the same combination for", unit: "hours",
    help: "A returning visitor sees the same page for this long.", advanced: true },
  { name: "foldIntervalSeconds", label: "Update the model every", unit: "seconds",
    help: "How often finished visits are added to the model and traffic is re-balanced.", advanced: true },
  { name: "retireProbability", label: "Retire a combination below a chance of being best of", unit: "share",
    help: "…and only when even its best plausible rate is below the leader's worst plausible rate.", advanced: true },
  { name: "retireAfterFolds", label: "…for this many updates in a row", unit: "count",
    help: "Guards against retiring on one unlucky update.", advanced: true },
  { name: "segmentSpread", label: "How far segments may differ", unit: "log-odds",
    help: "Starting guess of how far a segment strays from the pooled model; the engine learns the actual spread from the data, within a quarter to four times this.", advanced: true },
  { name: "priorMainScale", label: "Typical effect of one level", unit: "log-odds",
    help: "Prior spread of a level's effect; one page element rarely moves conversion by more than this.", advanced: true },
  { name: "priorInteractionScale", label: "Typical size of an interaction", unit: "log-odds",
    help: "Prior spread of a pair effect; usually smaller than a main effect.", advanced: true },
  { name: "priorInterceptMean", label: "Expected baseline conversion", unit: "log-odds",
    help: "Prior centre of the baseline rate in log-odds (−3 ≈ 4.7 %).", advanced: true },
  { name: "priorInterceptScale", label: "Uncertainty about the baseline", unit: "log-odds",
    help: "Prior spread of the baseline rate in log-odds; wide enough for any realistic rate.", advanced: true },
  { name: "samples", label: "Posterior samples per update", unit: "count",
    help: "More samples give smoother allocations at more computing cost.", advanced: true },
  { name: "maxSegments", label: "Most segments learned separately", unit: "count",
    help: "Beyond this, new segments are served from the pooled model.", advanced: true },
];

const unitWords: Record<Field["unit"], string> = {
  hours: "hours", seconds: "seconds", days: "days", share: "fraction 0–1", scale: "above 0, at most 1", count: "", "log-odds": "log-odds",
};

export interface SettingsForm {
  element: HTMLElement;
  /** The settings the user filled in (empty fields are left to the page's current or default value). */
  values(): Settings;
}

/**
 * The settings fieldsets. `current` is the page's resolved settings when editing, shown as the
 * starting values; on a new page the defaults are placeholders. `typed` (changes the user made on
 * an older version of the page) replaces the starting values it names.
 */
export function settingsForm(current: Settings | null, onChange: () => void, typed: Settings = {}): SettingsForm {
  const inputs = new Map<string, HTMLInputElement>();
  const refreshers = new Map<string, () => void>();
  const row = (field: Field) => {
    const id = uid(`setting-${field.name}`);
    const helpId = `${id}-help`;
    const echoId = `${id}-echo`;
    const startValue = field.name in typed ? typed[field.name] : current ? current[field.name] : undefined;
    const input = h("input", {
      id,
      name: field.name,
      type: "text",
      inputmode: "decimal",
      "data-field": `settings.${field.name}`,
      value: startValue === undefined || startValue === null ? "" : String(startValue),
      "aria-describedby": `${helpId} ${echoId}`,
    });
    const echo = h("span", { id: echoId, class: "echo" });
    const refresh = () => {
      const v = Number(input.value.trim() === "" ? input.placeholder : input.value);
      echo.textContent = field.unit === "share" && Number.isFinite(v) ? `= ${pct(v)}` : "";
    };
    input.addEventListener("input", () => {
      refresh();
      onChange();
    });
    refresh();
    inputs.set(field.name, input);
    refreshers.set(field.name, refresh);
    const unit = unitWords[field.unit];
    return h(
      "div",
      { class: "setting" },
      h("label", { for: id }, field.label, unit ? h("span", { class: "unit" }, ` (${unit})`) : null),
      h("div", { class: "setting-input" }, input, echo),
      h("p", { id: helpId, class: "hint" }, field.help),
      h("p", { class: "field-error", "data-error-for": `settings.${field.name}` }),
    );
  };
  const element = h(
    "div",
    { class: "settings" },
    h("div", { class: "settings-grid" }, settingFields.filter((f) => !f.advanced).map(row)),
    h(
      "details",
      { class: "more", "data-panel": "advanced-settings" },
      h("summary", null, "More settings: stickiness, update rhythm, retiring, priors"),
      h("div", { class: "settings-grid" }, settingFields.filter((f) => f.advanced).map(row)),
    ),
  );
  // The server's defaults become the placeholders of empty fields (one source of the defaults).
  api<SessionInfo>("GET", "/session").then(
    ({ defaultSettings }) => {
      for (const [name, input] of inputs) {
        const value = defaultSettings[name];
        input.placeholder = value === null ? "no forgetting" : value === undefined ? "" : String(value);
        refreshers.get(name)!();
      }
    },
    () => {}, // placeholders are a convenience; api() already handles a lost session
  );
  return {
    element,
    values() {
      const out: Settings = {};
      for (const [name, input] of inputs) {
        const text = input.value.trim();
        const before = current ? current[name] : undefined;
        if (text === "") {
          // clearing the half-life on a running page means "no forgetting" again
          if (name === "halfLifeDays" && before !== undefined && before !== null) out[name] = null;
          continue;
        }
        const value = Number(text);
        // a value that is not a number is still sent, so the server names the field in its message
        if (current && before === value) continue;
        out[name] = Number.isNaN(value) ? (text as unknown as number) : value;
      }
      return out;
    },
  };
}
