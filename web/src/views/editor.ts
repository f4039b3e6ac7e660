/**
 * Defining a new page: factors and their levels (with the value the landing page renders),
 * exclusion rules, the context keys that form segments, which factor pairs may interact, and the
 * settings. Every change is checked by the server (POST /definitions/check, which takes the whole
 * create body: page key and name, segment keys and settings too) a moment after typing stops; the
 * count line and the server's own messages update in place without disturbing focus.
 */
import { api, ApiError } from "../api.ts";
import { asColour, h, replace, uid } from "../dom.ts";
import { countLine, n } from "../format.ts";
import { announce, pageHref, type View } from "../shell.ts";
import { settingsForm } from "../settingsFields.ts";
import type { DefinitionCheck, Page, PageDefinitionBody } from "../types.ts";
import { showFieldErrors } from "./fieldErrors.ts";

interface DraftLevel { id: string; name: string; value: string }
interface DraftFactor { id: string; name: string; levels: DraftLevel[] }
interface DraftCondition { factor: string; level: string } // ids
interface Draft {
  factors: DraftFactor[];
  rules: DraftCondition[][];
  allPairs: boolean;
  pairs: Set<string>; // "factorId|factorId"
}

const newLevel = (): DraftLevel => ({ id: uid("l"), name: "", value: "" });
const newFactor = (): DraftFactor => ({ id: uid("f"), name: "", levels: [newLevel(), newLevel()] });

export function renderEditor(main: HTMLElement): View {
  document.title = "New page · facetwise";
  const draft: Draft = { factors: [newFactor()], rules: [], allPairs: true, pairs: new Set() };
  let checkTimer = 0;
  let checkSeq = 0;
  let disposed = false;
  // until the user has typed something, a failing check is just an empty form, not an error
  let touched = false;

  const keyInput = h("input", {
    id: "page-key", name: "key", required: true, autocomplete: "off", spellcheck: "false",
    "data-field": "key", placeholder: "spring-sale", "aria-describedby": "page-key-help",
  });
  const nameInput = h("input", {
    id: "page-name", name: "name", required: true, autocomplete: "off", "data-field": "name",
    placeholder: "Spring sale landing page",
  });
  const segmentInput = h("input", {
    id: "segment-by", name: "segmentBy", autocomplete: "off", spellcheck: "false",
    "data-field": "segmentBy", placeholder: "source, campaign", "aria-describedby": "segment-by-help",
  });
  const factorsBox = h("div", { class: "factors" });
  const rulesBox = h("div", { class: "rules" });
  const pairsBox = h("div", { class: "pairs" });
  const count = h("p", { class: "count", id: "definition-count", "aria-live": "polite" }, "Checking…");
  const countDetail = h("p", { class: "hint", id: "definition-detail" });
  const problems = h("div", { class: "problems", id: "definition-problems", role: "alert" });
  const submitError = h("p", { class: "form-error", role: "alert" });
  const submit = h("button", { type: "submit", class: "primary" }, "Create page");
  const settings = settingsForm(null, () => scheduleCheck());

  const names = () => {
    const factorName = new Map(draft.factors.map((f) => [f.id, f.name.trim()]));
    const levelName = new Map(draft.factors.flatMap((f) => f.levels.map((l) => [l.id, l.name.trim()] as const)));
    return { factorName, levelName };
  };

  function body(): PageDefinitionBody {
    const { factorName, levelName } = names();
    const segmentBy = segmentInput.value.split(",").map((s) => s.trim()).filter(Boolean);
    const def: PageDefinitionBody = {
      factors: draft.factors.map((f) => ({
        name: f.name.trim(),
        levels: f.levels.map((l) => (l.value === "" ? { name: l.name.trim() } : { name: l.name.trim(), value: l.value })),
      })),
    };
    const rules = draft.rules
      .map((rule) => Object.fromEntries(rule.filter((c) => c.factor && c.level).map((c) => [factorName.get(c.factor) ?? "", levelName.get(c.level) ?? ""])))
      .filter((rule) => Object.keys(rule).length > 0);
    if (rules.length) def.exclude = rules;
    if (segmentBy.length) def.segmentBy = segmentBy;
    if (!draft.allPairs) {
      def.interactions = [...draft.pairs]
        .map((p) => p.split("|").map((id) => factorName.get(id) ?? "") as [string, string])
        .filter(([a, b]) => a && b);
    }
    const values = settings.values();
    if (Object.keys(values).length) def.settings = values;
    return def;
  }

  function scheduleCheck(): void {
    clearTimeout(checkTimer);
    checkTimer = window.setTimeout(runCheck, 250);
  }

  async function runCheck(): Promise<void> {
    const seq = ++checkSeq;
    if (!touched) {
      count.textContent = "Name a factor and its levels to see how many combinations they make.";
      return;
    }
    try {
      // key and name are sent once typed, so an empty one is not an error while the factors are written
      const key = keyInput.value.trim();
      const name = nameInput.value.trim();
      const result = await api<DefinitionCheck>("POST", "/definitions/check", { ...(key ? { key } : {}), ...(name ? { name } : {}), ...body() });
      if (disposed || seq !== checkSeq) return;
      const c = result.combinations;
      count.textContent = countLine(result.factors.length, c.total, c.excluded);
      countDetail.textContent =
        `${n(c.allowed)} of them can be shown to visitors; the model learns ${n(result.dimension)} numbers ` +
        `(a baseline, one per level beyond each factor's first, and one per level pair of interacting factors).`;
      count.classList.remove("invalid");
      showFieldErrors(main, problems, null);
    } catch (error) {
      if (disposed || seq !== checkSeq) return;
      // 409: the page key is taken
      if (error instanceof ApiError && (error.status === 400 || error.status === 409)) {
        count.textContent = "Not valid yet";
        count.classList.add("invalid");
        countDetail.textContent = "The server's message says what to fix:";
        showFieldErrors(main, problems, error);
      } else {
        count.textContent = "Cannot check right now";
        countDetail.textContent = (error as Error).message;
      }
    }
  }

  // ---- factors and levels -------------------------------------------------------------------
  function renderFactors(): void {
    replace(
      factorsBox,
      draft.factors.map((factor, fi) => factorBlock(factor, fi)),
      h("button", { type: "button", class: "add", onclick: () => {
        const f = newFactor();
        draft.factors.push(f);
        structureChanged();
        focusField(`factors.${draft.factors.length - 1}.name`);
      } }, "+ Add a factor"),
    );
  }

  function factorBlock(factor: DraftFactor, fi: number): HTMLElement {
    const nameId = uid("factor-name");
    const nameIn = h("input", {
      id: nameId, value: factor.name, autocomplete: "off", "data-field": `factors.${fi}.name`,
      placeholder: ["headline", "hero", "button"][fi] ?? "factor name", "aria-describedby": `${nameId}-err`,
    });
    nameIn.addEventListener("input", () => {
      factor.name = nameIn.value;
      namesChanged();
    });
    const levelRows = factor.levels.map((level, li) => levelRow(factor, level, fi, li));
    return h(
      "fieldset",
      { class: "factor" },
      h("legend", null, `Factor ${fi + 1}`),
      h(
        "div",
        { class: "factor-head" },
        h("label", { for: nameId }, "Factor name"),
        nameIn,
        h("button", {
          type: "button", class: "quiet danger",
          "aria-label": `Remove factor ${fi + 1}`,
          onclick: () => {
            draft.factors.splice(fi, 1);
            draft.rules = draft.rules.map((r) => r.filter((c) => c.factor !== factor.id)).filter((r) => r.length);
            structureChanged();
          },
        }, "Remove factor"),
      ),
      h("p", { class: "field-error", id: `${nameId}-err`, "data-error-for": `factors.${fi}.name` }),
      h(
        "div",
        { class: "level-table", role: "group", "aria-label": `Levels of factor ${fi + 1}` },
        h("div", { class: "level-head", "aria-hidden": "true" }, h("span", null, "Level"), h("span", null, "Value the page renders (text, colour, image address)")),
        levelRows,
      ),
      h("p", { class: "field-error", "data-error-for": `factors.${fi}.levels` }),
      h("button", { type: "button", class: "add", onclick: () => {
        factor.levels.push(newLevel());
        structureChanged();
        focusField(`factors.${fi}.levels.${factor.levels.length - 1}.name`);
      } }, "+ Add a level"),
    );
  }

  function levelRow(factor: DraftFactor, level: DraftLevel, fi: number, li: number): HTMLElement {
    const nameIn = h("input", {
      value: level.name, autocomplete: "off", "data-field": `factors.${fi}.levels.${li}.name`,
      "aria-label": `Factor ${fi + 1}, level ${li + 1} name`, placeholder: fi > 0 ? "level name" : li === 0 ? "plain" : "question",
    });
    const valueIn = h("input", {
      value: level.value, autocomplete: "off", "data-field": `factors.${fi}.levels.${li}.value`,
      "aria-label": `Factor ${fi + 1}, level ${li + 1} value`, placeholder: fi > 0 ? "text, #colour or image address" : li === 0 ? "Book a repair" : "Broken bike? Fixed today.",
    });
    nameIn.addEventListener("input", () => {
      level.name = nameIn.value;
      namesChanged();
    });
    // a colour value gets a swatch inside its field, so a typo in "#2f6f73" shows at once
    const swatch = h("span", { class: "swatch", "aria-hidden": "true" });
    const paint = () => {
      const colour = asColour(valueIn.value);
      swatch.hidden = colour === null;
      if (colour) swatch.style.backgroundColor = colour;
    };
    paint();
    valueIn.addEventListener("input", () => {
      level.value = valueIn.value;
      paint();
      scheduleCheck();
    });
    return h(
      "div",
      { class: "level-row" },
      nameIn,
      h("span", { class: "value-wrap" }, valueIn, swatch),
      h("button", {
        type: "button", class: "quiet icon", "aria-label": `Remove level ${li + 1} of factor ${fi + 1}`, title: "Remove level",
        onclick: () => {
          factor.levels.splice(li, 1);
          draft.rules = draft.rules.map((r) => r.filter((c) => c.level !== level.id)).filter((r) => r.length);
          structureChanged();
        },
      }, "×"),
      h("p", { class: "field-error", "data-error-for": `factors.${fi}.levels.${li}.name` }),
    );
  }

  // ---- exclusion rules -----------------------------------------------------------------------
  function renderRules(): void {
    const { factorName, levelName } = names();
    const rules = draft.rules.map((rule, ri) =>
      h(
        "div",
        { class: "rule", role: "group", "aria-label": `Exclusion rule ${ri + 1}` },
        h("span", { class: "rule-lead" }, `Never show`),
        rule.map((cond, ci) => {
          const factor = draft.factors.find((f) => f.id === cond.factor);
          const fSel = h("select", { "aria-label": `Rule ${ri + 1}, condition ${ci + 1} factor`, "data-field": `exclude.${ri}` },
            h("option", { value: "" }, "factor…"),
            draft.factors.map((f, fi) => h("option", { value: f.id, selected: f.id === cond.factor }, factorName.get(f.id) || `factor ${fi + 1}`)));
          const lSel = h("select", { "aria-label": `Rule ${ri + 1}, condition ${ci + 1} level` },
            h("option", { value: "" }, "level…"),
            (factor?.levels ?? []).map((l, li) => h("option", { value: l.id, selected: l.id === cond.level }, levelName.get(l.id) || `level ${li + 1}`)));
          fSel.addEventListener("change", () => {
            cond.factor = fSel.value;
            cond.level = "";
            renderRules();
            scheduleCheck();
          });
          lSel.addEventListener("change", () => {
            cond.level = lSel.value;
            scheduleCheck();
          });
          return h("span", { class: "cond" }, ci > 0 ? h("span", { class: "and" }, "with") : null, fSel, " = ", lSel,
            rule.length > 1
              ? h("button", { type: "button", class: "quiet icon", "aria-label": `Remove condition ${ci + 1} of rule ${ri + 1}`,
                  onclick: () => { rule.splice(ci, 1); renderRules(); scheduleCheck(); } }, "×")
              : null);
        }),
        h("button", { type: "button", class: "quiet", onclick: () => { rule.push({ factor: "", level: "" }); renderRules(); } }, "+ with…"),
        h("button", { type: "button", class: "quiet danger", "aria-label": `Remove rule ${ri + 1}`,
          onclick: () => { draft.rules.splice(ri, 1); renderRules(); scheduleCheck(); } }, "Remove rule"),
        h("p", { class: "field-error", "data-error-for": `exclude.${ri}` }),
      ),
    );
    replace(
      rulesBox,
      rules.length ? rules : h("p", { class: "hint" }, "No rules: every combination may be shown."),
      h("button", { type: "button", class: "add", onclick: () => {
        draft.rules.push([{ factor: "", level: "" }, { factor: "", level: "" }]);
        renderRules();
      } }, "+ Add an exclusion rule"),
    );
  }

  // ---- interacting pairs ---------------------------------------------------------------------
  function renderPairs(): void {
    const { factorName } = names();
    const all = h("input", { type: "checkbox", id: "all-pairs", checked: draft.allPairs });
    all.addEventListener("change", () => {
      draft.allPairs = all.checked;
      if (!draft.allPairs && draft.pairs.size === 0) for (const p of pairList()) draft.pairs.add(p.join("|"));
      renderPairs();
      scheduleCheck();
    });
    const pairs = pairList().map(([a, b]) => {
      const key = `${a}|${b}`;
      const id = uid("pair");
      const box = h("input", { type: "checkbox", id, checked: draft.pairs.has(key) });
      box.addEventListener("change", () => {
        if (box.checked) draft.pairs.add(key);
        else draft.pairs.delete(key);
        scheduleCheck();
      });
      return h("div", { class: "check" }, box, h("label", { for: id }, `${factorName.get(a) || "?"} × ${factorName.get(b) || "?"}`));
    });
    replace(
      pairsBox,
      h("div", { class: "check" }, all, h("label", { for: "all-pairs" }, "Every pair of factors may interact (recommended)")),
      draft.allPairs ? null : h("div", { class: "pair-grid", role: "group", "aria-label": "Interacting pairs" }, pairs),
      h("p", { class: "field-error", "data-error-for": "interactions" }),
    );
  }

  function pairList(): [string, string][] {
    const out: [string, string][] = [];
    draft.factors.forEach((a, i) => draft.factors.slice(i + 1).forEach((b) => out.push([a.id, b.id])));
    return out;
  }

  function namesChanged(): void {
    renderRules();
    renderPairs();
    scheduleCheck();
  }

  function structureChanged(): void {
    const live = new Set(pairList().map((p) => p.join("|")));
    for (const p of draft.pairs) if (!live.has(p)) draft.pairs.delete(p);
    renderFactors();
    namesChanged();
  }

  function focusField(field: string): void {
    const el = main.querySelector<HTMLElement>(`[data-field="${field}"]`);
    el?.focus();
  }

  // ---- the form ------------------------------------------------------------------------------
  const form = h(
    "form",
    { class: "editor", novalidate: true, "aria-labelledby": "editor-title" },
    h("h1", { id: "editor-title" }, "Define a new page"),
    h("p", { class: "lede" }, "Describe the page as factors and their levels. facetwise works out the combinations, learns which ones convert in each segment and moves traffic to them."),
    h(
      "section",
      { class: "panel", "aria-labelledby": "sec-page" },
      h("h2", { id: "sec-page" }, "The page"),
      h("div", { class: "two" },
        h("div", null, h("label", { for: "page-name" }, "Name"), nameInput, h("p", { class: "field-error", "data-error-for": "name" })),
        h("div", null, h("label", { for: "page-key" }, "Key"), keyInput,
          h("p", { class: "hint", id: "page-key-help" }, "Used in the address your landing page calls; lower-case letters, digits and dashes."),
          h("p", { class: "field-error", "data-error-for": "key" }))),
    ),
    h(
      "section",
      { class: "panel", "aria-labelledby": "sec-factors" },
      h("h2", { id: "sec-factors" }, "Factors and levels"),
      h("p", { class: "hint" }, "A factor is one element of the page (headline, hero image, button); its levels are the options. The first level of each factor is its reference."),
      factorsBox,
    ),
    h(
      "section",
      { class: "panel", "aria-labelledby": "sec-rules" },
      h("h2", { id: "sec-rules" }, "Exclusion rules"),
      h("p", { class: "hint" }, "Combinations that must never be shown, such as a video hero with a split layout."),
      rulesBox,
    ),
    h(
      "section",
      { class: "panel", "aria-labelledby": "sec-segments" },
      h("h2", { id: "sec-segments" }, "Segments and interactions"),
      h("label", { for: "segment-by" }, "Context keys that form segments"),
      segmentInput,
      h("p", { class: "hint", id: "segment-by-help" }, "Comma-separated, e.g. source, campaign. Each distinct set of values learns its own winner and borrows strength from the others. Leave empty for one segment."),
      h("p", { class: "field-error", "data-error-for": "segmentBy" }),
      h("h3", null, "Which factors may interact"),
      h("p", { class: "hint" }, "An interaction lets a pair work better (or worse) together than each alone, e.g. a question headline with a photo."),
      pairsBox,
    ),
    h(
      "section",
      { class: "panel", "aria-labelledby": "sec-settings" },
      h("h2", { id: "sec-settings" }, "Settings"),
      h("p", { class: "hint" }, "Empty fields use the default shown in grey."),
      settings.element,
    ),
    h(
      "div",
      { class: "summary-bar panel", "aria-labelledby": "definition-count" },
      count,
      countDetail,
      problems,
      submitError,
      h("div", { class: "actions" }, submit, h("a", { href: "#/", class: "button quiet" }, "Cancel")),
    ),
  );

  for (const input of [segmentInput, keyInput, nameInput]) input.addEventListener("input", scheduleCheck);
  // the key follows the name ("Spring sale" → "spring-sale") until the user edits the key itself
  let keyEdited = false;
  keyInput.addEventListener("input", () => (keyEdited = keyInput.value !== ""));
  nameInput.addEventListener("input", () => {
    if (keyEdited) return;
    keyInput.value = nameInput.value.toLowerCase().normalize("NFKD").replace(/[^a-z0-9]+/g, "-").replace(/^-+|-+$/g, "").slice(0, 63);
  });
  for (const type of ["input", "change"]) form.addEventListener(type, () => (touched = true), { capture: true });

  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    submit.disabled = true;
    submitError.textContent = "";
    try {
      const page = await api<Page>("POST", "/pages", { key: keyInput.value.trim(), name: nameInput.value.trim(), ...body() });
      announce(`Page ${page.name} created.`);
      location.hash = pageHref(page.key);
    } catch (error) {
      submit.disabled = false;
      if (error instanceof ApiError && error.status < 500) {
        showFieldErrors(main, problems, error);
        submitError.textContent = "The page was not created.";
      } else submitError.textContent = (error as Error).message;
    }
  });

  replace(main, form);
  renderFactors();
  renderRules();
  renderPairs();
  scheduleCheck();
  nameInput.focus();

  return {
    dispose() {
      disposed = true;
      clearTimeout(checkTimer);
    },
  };
}
