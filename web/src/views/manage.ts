/**
 * Managing a running page: pause, resume or freeze it; add or remove levels and factors; change
 * level values, the name and settings. Before anything is applied the view says, in plain words,
 * what each change does to what was learned and shows the new combination count (checked by the
 * server); after PATCH it shows the server's own account of what it kept, dropped and added.
 * Every PATCH names the version of the page the form shows (If-Match); when someone else changed
 * the page meanwhile the server refuses it (412 PAGE_CHANGED) and the form offers to load the
 * current page, carrying over what the user entered.
 */
import { api, ApiError, tagged, type Tagged } from "../api.ts";
import { h, replace, uid, type Child } from "../dom.ts";
import { countLine, n } from "../format.ts";
import { announce } from "../shell.ts";
import { settingsForm } from "../settingsFields.ts";
import type { DefinitionCheck, DefinitionCore, FactorSpec, LearnedNote, Page, PageStatus } from "../types.ts";
import { showFieldErrors } from "./fieldErrors.ts";
import { statusBadge } from "./parts.ts";

interface PatchBody {
  name?: string;
  settings?: Record<string, number | null>;
  status?: PageStatus;
  addFactors?: FactorSpec[];
  removeFactors?: string[];
  addLevels?: { factor: string; name: string; value?: string }[];
  removeLevels?: { factor: string; level: string }[];
  levelValues?: { factor: string; level: string; value: string }[];
}

const statusMeaning: Record<PageStatus, string> = {
  active: "Learning: visitors are spread by the model, which updates as conversions come in.",
  paused: "Paused: every visitor gets the baseline combination and nothing new is learned. What was learned is kept; resuming carries on from there.",
  frozen: "Frozen: each segment gets its current leader, with no exploration. What was learned is kept; resuming returns to exploring.",
};

const statusActions: { to: PageStatus; label: string; effect: string }[] = [
  { to: "active", label: "Resume learning", effect: "Traffic is spread by the model again, exploring as before; nothing learned is lost." },
  { to: "paused", label: "Pause", effect: "Everyone gets the baseline combination and the model stops learning. What was learned is kept for when you resume." },
  { to: "frozen", label: "Freeze on the leaders", effect: "Each segment is served its current leader with no exploration; figures stop sharpening. What was learned is kept." },
];

type OnUpdated = (shown: Tagged<Page>) => void;
/** What became of carried edits: any still pending, and how many were left out. */
interface Carried { pending: boolean; leftOut: number }

/** `shown` is the page the form starts from, with the ETag of the answer it came in. */
export function renderManage(shown: Tagged<Page>, onUpdated: OnUpdated): HTMLElement {
  const root = h("div", { class: "manage" });
  draw(root, shown, onUpdated, null);
  return root;
}

/**
 * Draws the form for `shown`. `note` goes in the result slot; `carried` holds edits the user made
 * on an older version of the page, re-applied where they still name something on this one.
 */
function draw(root: HTMLElement, shown: Tagged<Page>, onUpdated: OnUpdated, note: HTMLElement | null, carried: PatchBody = {}): Carried {
  const page = shown.value;
  const result = h("div", { role: "status", class: "result-slot" }, note);
  const problems = h("div", { class: "problems", role: "alert" });
  // kept apart from `problems`, which every keystroke clears: this one stays until the page is reloaded
  const changedMeanwhile = h("div", { class: "problems", role: "alert" });
  const count = h("p", { class: "count", "aria-live": "polite" });
  const consequences = h("ul", { class: "consequences" });
  const apply = h("button", { type: "submit", class: "primary", disabled: true }, "Apply changes");

  // pending edits
  const removedLevels = new Set<string>(); // factor \u0000 level
  const removedFactors = new Set<string>();
  const valueEdits = new Map<string, string>();
  const addedLevels: { factor: string; name: string; value: string }[] = [];
  const addedFactors: { id: string; name: string; levels: { name: string; value: string }[] }[] = [];
  const nameInput = h("input", { id: "manage-name", value: carried.name ?? page.name, "data-field": "name", autocomplete: "off" });
  const settings = settingsForm(page.settings, () => changed(), carried.settings);
  const lk = (f: string, l: string) => `${f}\u0000${l}`;

  const levelOf = (f: string, l: string) => page.factors.find((x) => x.name === f)?.levels.find((x) => x.name === l);
  const hasFactor = (f: string) => page.factors.some((x) => x.name === f);
  /** Carried edits that name a factor or level this version no longer has (someone removed it). */
  let leftOut = 0;
  const fitting = <T>(items: T[] | undefined, fits: (item: T) => boolean): T[] => {
    const kept = (items ?? []).filter(fits);
    leftOut += (items ?? []).length - kept.length;
    return kept;
  };
  for (const f of fitting(carried.removeFactors, hasFactor)) removedFactors.add(f);
  for (const r of fitting(carried.removeLevels, (r) => levelOf(r.factor, r.level) !== undefined)) removedLevels.add(lk(r.factor, r.level));
  for (const v of fitting(carried.levelValues, (v) => levelOf(v.factor, v.level) !== undefined)) {
    if (v.value !== (levelOf(v.factor, v.level)?.value ?? "")) valueEdits.set(lk(v.factor, v.level), v.value);
  }
  for (const l of fitting(carried.addLevels, (l) => hasFactor(l.factor))) addedLevels.push({ factor: l.factor, name: l.name, value: l.value ?? "" });
  for (const f of carried.addFactors ?? []) {
    addedFactors.push({ id: uid("nf"), name: f.name, levels: f.levels.map((l) => ({ name: l.name, value: l.value ?? "" })) });
  }

  async function patch(body: PatchBody, what: string): Promise<void> {
    apply.disabled = true;
    showFieldErrors(root, problems, null);
    try {
      // no ETag (a proxy dropped it): the edit goes without a precondition, as it would from a script
      const out = await tagged<{ page: Page; learned: LearnedNote }>("PATCH", `/pages/${encodeURIComponent(page.key)}`, body, shown.etag ?? undefined);
      announce(`${what} ${out.value.learned.message}`);
      const next = { value: out.value.page, etag: out.etag };
      onUpdated(next);
      draw(root, next, onUpdated, learnedBox(out.value.learned));
      root.querySelector<HTMLElement>(".learned")?.focus();
    } catch (error) {
      if (error instanceof ApiError && error.code === "PAGE_CHANGED") showChangedMeanwhile();
      else showProblem(error);
      apply.disabled = false;
    }
  }

  function showProblem(error: unknown): void {
    if (error instanceof ApiError) showFieldErrors(root, problems, error);
    else replace(problems, h("p", { class: "problem" }, (error as Error).message));
  }

  /** The 412 answer in words, with the way out: load the page as it is now, keeping the user's edits. */
  function showChangedMeanwhile(): void {
    const reload = h("button", { type: "button", class: "primary", onclick: () => void reloadKeepingEdits(reload) }, "Load the current page");
    replace(changedMeanwhile, h("div", { class: "problem page-changed" },
      h("span", { class: "problem-mark", "aria-hidden": "true" }, "!"),
      h("div", null,
        h("p", null, h("strong", null, "Nothing was saved. "),
          "Someone changed this page after this form was loaded (in another console or tab), and applying your edits would have overwritten theirs."),
        h("p", null, "Load the current page to see what it is now. What you entered here is kept in the form, so you can check it against the current page and apply it again."),
        h("div", { class: "actions" }, reload))));
    reload.focus();
  }

  async function reloadKeepingEdits(button: HTMLButtonElement): Promise<void> {
    button.disabled = true;
    try {
      const current = await tagged<Page>("GET", `/pages/${encodeURIComponent(page.key)}`);
      onUpdated(current);
      const reloaded = h("div", { class: "panel learned", tabindex: "-1" }, h("h2", null, "Current page loaded"));
      const { pending, leftOut: dropped } = draw(root, current, onUpdated, reloaded, body());
      reloaded.append(h("p", null, pending
        ? "The form now shows the page as it is, with your edits carried over: check what they do below and apply them again."
        : "The form now shows the page as it is: redo your change on it."));
      if (dropped) reloaded.append(h("p", null, `${n(dropped)} of your edits named a factor or level that is no longer on the page and ${dropped === 1 ? "was" : "were"} left out.`));
      reloaded.focus();
    } catch (error) {
      button.disabled = false;
      showProblem(error);
    }
  }

  function body(): PatchBody {
    const b: PatchBody = {};
    if (nameInput.value.trim() !== page.name) b.name = nameInput.value.trim();
    const s = settings.values();
    if (Object.keys(s).length) b.settings = s;
    if (removedFactors.size) b.removeFactors = [...removedFactors];
    if (removedLevels.size) b.removeLevels = [...removedLevels].map((k) => { const [factor, level] = k.split("\u0000"); return { factor, level }; });
    const adds = addedLevels.filter((l) => l.name.trim() !== "" || l.value !== "");
    if (adds.length) b.addLevels = adds.map((l) => (l.value === "" ? { factor: l.factor, name: l.name.trim() } : { factor: l.factor, name: l.name.trim(), value: l.value }));
    if (addedFactors.length) b.addFactors = addedFactors.map((f) => ({ name: f.name.trim(), levels: f.levels.map((l) => (l.value === "" ? { name: l.name.trim() } : { name: l.name.trim(), value: l.value })) }));
    const values = [...valueEdits].map(([k, value]) => { const [factor, level] = k.split("\u0000"); return { factor, level, value }; })
      .filter((v) => !removedFactors.has(v.factor) && !removedLevels.has(lk(v.factor, v.level)));
    if (values.length) b.levelValues = values;
    return b;
  }

  /** The definition the page would have after the pending edits, for the server's count check. */
  function nextDefinition(): DefinitionCore {
    const factors: FactorSpec[] = page.factors
      .filter((f) => !removedFactors.has(f.name))
      .map((f) => ({
        name: f.name,
        levels: [
          ...f.levels.filter((l) => !removedLevels.has(lk(f.name, l.name))).map((l) => ({ name: l.name, value: valueEdits.get(lk(f.name, l.name)) ?? l.value })),
          ...addedLevels.filter((l) => l.factor === f.name && (l.name.trim() || l.value)).map((l) => ({ name: l.name.trim(), value: l.value })),
        ],
      }));
    for (const f of addedFactors) factors.push({ name: f.name.trim(), levels: f.levels.map((l) => ({ name: l.name.trim(), value: l.value })) });
    const names = new Set(factors.map((f) => f.name));
    const exclude = page.exclude.filter((rule) => Object.entries(rule).every(([f, l]) => names.has(f) && !removedLevels.has(lk(f, l))));
    const interactions = page.interactions === null ? undefined : page.interactions.filter(([a, b]) => names.has(a) && names.has(b));
    return { factors, exclude, ...(interactions ? { interactions } : {}) };
  }

  let timer = 0;
  let seq = 0;
  function changed(): void {
    const b = body();
    const lines = explain(b);
    replace(consequences, lines.length ? lines.map((l) => h("li", null, l)) : h("li", { class: "hint" }, "No changes yet."));
    apply.disabled = lines.length === 0;
    clearTimeout(timer);
    const structural = b.addFactors || b.removeFactors || b.addLevels || b.removeLevels;
    if (!structural) {
      count.textContent = `Now: ${countLine(page.factors.length, page.combinations.total, page.combinations.excluded)}`;
      showFieldErrors(root, problems, null);
      return;
    }
    timer = window.setTimeout(async () => {
      const mine = ++seq;
      try {
        const check = await api<DefinitionCheck>("POST", "/definitions/check", nextDefinition());
        if (mine !== seq) return;
        count.textContent = `After these changes: ${countLine(check.factors.length, check.combinations.total, check.combinations.excluded)}`;
        showFieldErrors(root, problems, null);
      } catch (error) {
        if (mine !== seq) return;
        count.textContent = "These changes would not make a valid page:";
        if (error instanceof ApiError) showFieldErrors(root, problems, error);
      }
    }, 250);
  }

  function explain(b: PatchBody): string[] {
    const out: string[] = [];
    if (b.name) out.push(`Rename the page to “${b.name}”. Nothing learned changes.`);
    for (const l of b.addLevels ?? []) {
      out.push(`Add level “${l.name}” to ${l.factor}: everything learned so far is kept; the new level starts with no evidence and its combinations join the exploration, so leaders may change while it is tried.`);
    }
    for (const f of b.addFactors ?? []) {
      out.push(`Add factor “${f.name}”: what was learned is kept and read as evidence for its first level (the reference, “${f.levels[0]?.name ?? "?"}”); its other levels start with no evidence.`);
    }
    for (const l of b.removeLevels ?? []) {
      out.push(`Remove level “${l.level}” of ${l.factor}: what was learned about it (its effect and its pairings) is dropped, the rest is kept; combinations with it are no longer shown.`);
    }
    for (const f of b.removeFactors ?? []) {
      out.push(`Remove factor “${f}”: what was learned about its levels and pairings is dropped, the rest is kept; exclusion rules naming it go with it.`);
    }
    for (const v of b.levelValues ?? []) {
      out.push(`Change the value of ${v.factor} “${v.level}”: nothing learned changes, because the model knows levels by name. If the new content is really different, add it as a new level instead, so old evidence is not credited to it.`);
    }
    if (b.settings) {
      out.push(`Change ${Object.keys(b.settings).join(", ")}: applies from the next model update; what was learned is kept.`);
    }
    return out;
  }

  // ---- status ---------------------------------------------------------------------------------
  const statusSection = h(
    "section",
    { class: "panel", "aria-labelledby": "status-title" },
    h("h2", { id: "status-title" }, "Status ", statusBadge(page.status)),
    h("p", null, statusMeaning[page.status]),
    h(
      "ul",
      { class: "status-actions" },
      statusActions.filter((a) => a.to !== page.status).map((a) =>
        h("li", null,
          h("button", { type: "button", onclick: () => patch({ status: a.to }, `${a.label}:`) }, a.label),
          h("span", { class: "hint" }, a.effect)),
      ),
    ),
  );

  // ---- factors and levels ---------------------------------------------------------------------
  const factorList = h("div", { class: "factors" });
  function drawFactors(): void {
    replace(
      factorList,
      page.factors.map((f) => {
        const factorGone = removedFactors.has(f.name);
        const added = addedLevels.filter((l) => l.factor === f.name);
        return h(
          "fieldset",
          { class: factorGone ? "factor removed" : "factor" },
          h("legend", null, f.name, factorGone ? h("span", { class: "tag" }, "to be removed") : null),
          h("div", { class: "level-table" },
            f.levels.map((l, li) => {
              const key = lk(f.name, l.name);
              const gone = removedLevels.has(key);
              const input = h("input", {
                value: valueEdits.get(key) ?? l.value ?? "", "aria-label": `Value of ${f.name} level ${l.name}`,
                disabled: factorGone || gone, autocomplete: "off",
              });
              input.addEventListener("input", () => {
                if (input.value === (l.value ?? "")) valueEdits.delete(key);
                else valueEdits.set(key, input.value);
                changed();
              });
              return h("div", { class: gone ? "level-row removed" : "level-row" },
                h("span", { class: "level-name" }, l.name, li === 0 ? h("span", { class: "muted" }, " (reference)") : null, gone ? h("span", { class: "tag" }, "to be removed") : null),
                input,
                h("button", {
                  type: "button", class: "quiet", disabled: factorGone,
                  "aria-label": `${gone ? "Keep" : "Remove"} level ${l.name} of ${f.name}`,
                  onclick: () => { if (gone) removedLevels.delete(key); else removedLevels.add(key); drawFactors(); changed(); },
                }, gone ? "Keep" : "Remove"));
            }),
            added.map((l) => {
              const nameIn = h("input", { value: l.name, placeholder: "new level name", "aria-label": `New level name for ${f.name}`, autocomplete: "off" });
              const valueIn = h("input", { value: l.value, placeholder: "its value", "aria-label": `New level value for ${f.name}`, autocomplete: "off" });
              nameIn.addEventListener("input", () => { l.name = nameIn.value; changed(); });
              valueIn.addEventListener("input", () => { l.value = valueIn.value; changed(); });
              return h("div", { class: "level-row added" }, nameIn, valueIn,
                h("button", { type: "button", class: "quiet", "aria-label": `Drop the new level of ${f.name}`, onclick: () => { addedLevels.splice(addedLevels.indexOf(l), 1); drawFactors(); changed(); } }, "Drop"));
            }),
          ),
          h("div", { class: "actions" },
            h("button", { type: "button", class: "add", disabled: factorGone, onclick: () => {
              addedLevels.push({ factor: f.name, name: "", value: "" });
              drawFactors();
              const inputs = factorList.querySelectorAll<HTMLInputElement>(`input[aria-label="New level name for ${CSS.escape(f.name)}"]`);
              inputs[inputs.length - 1]?.focus();
            } }, `+ Add a level to ${f.name}`),
            h("button", { type: "button", class: "quiet danger", onclick: () => {
              if (factorGone) removedFactors.delete(f.name); else removedFactors.add(f.name);
              drawFactors(); changed();
            } }, factorGone ? `Keep factor ${f.name}` : `Remove factor ${f.name}`)),
        );
      }),
      addedFactors.map((f) => newFactorBlock(f)),
      h("button", { type: "button", class: "add", onclick: () => {
        addedFactors.push({ id: uid("nf"), name: "", levels: [{ name: "", value: "" }, { name: "", value: "" }] });
        drawFactors();
        changed();
      } }, "+ Add a factor"),
    );
  }

  function newFactorBlock(f: (typeof addedFactors)[number]): HTMLElement {
    const nameIn = h("input", { value: f.name, "aria-label": "New factor name", placeholder: "new factor name", autocomplete: "off" });
    nameIn.addEventListener("input", () => { f.name = nameIn.value; changed(); });
    return h("fieldset", { class: "factor added" }, h("legend", null, "New factor"),
      nameIn,
      h("div", { class: "level-table" }, f.levels.map((l, i) => {
        const ln = h("input", { value: l.name, "aria-label": `New factor level ${i + 1} name`, placeholder: i === 0 ? "reference level" : "level name", autocomplete: "off" });
        const lv = h("input", { value: l.value, "aria-label": `New factor level ${i + 1} value`, placeholder: "its value", autocomplete: "off" });
        ln.addEventListener("input", () => { l.name = ln.value; changed(); });
        lv.addEventListener("input", () => { l.value = lv.value; changed(); });
        return h("div", { class: "level-row added" }, ln, lv);
      })),
      h("div", { class: "actions" },
        h("button", { type: "button", class: "add", onclick: () => { f.levels.push({ name: "", value: "" }); drawFactors(); changed(); } }, "+ Add a level"),
        h("button", { type: "button", class: "quiet danger", onclick: () => { addedFactors.splice(addedFactors.indexOf(f), 1); drawFactors(); changed(); } }, "Drop this factor")));
  }

  nameInput.addEventListener("input", changed);
  const form = h(
    "form",
    { class: "manage-form", novalidate: true },
    h("section", { class: "panel", "aria-labelledby": "def-title" },
      h("h2", { id: "def-title" }, "Change the page"),
      h("label", { for: "manage-name" }, "Name"), nameInput,
      h("h3", null, "Factors, levels and values"),
      h("p", { class: "hint" }, "Exclusion rules, segments and interacting pairs are fixed once a page runs; define a new page to change them."),
      factorList),
    h("section", { class: "panel", "aria-labelledby": "manage-settings-title" },
      h("h2", { id: "manage-settings-title" }, "Settings"),
      settings.element),
    h("section", { class: "panel summary-bar", "aria-labelledby": "review-title" },
      h("h2", { id: "review-title" }, "What these changes do to what was learned"),
      consequences, count, changedMeanwhile, problems,
      h("div", { class: "actions" }, apply)),
  );
  form.addEventListener("submit", (event) => {
    event.preventDefault();
    void patch(body(), "Changes applied.");
  });

  const children: Child[] = [result, statusSection, form];
  replace(root, children);
  drawFactors();
  changed();
  return { pending: explain(body()).length > 0, leftOut };
}

function learnedBox(note: LearnedNote): HTMLElement {
  const lists = [
    note.droppedFeatures.length ? h("li", null, `Dropped: ${note.droppedFeatures.join(", ")}.`) : null,
    note.addedFeatures.length ? h("li", null, `Starting from the prior: ${note.addedFeatures.join(", ")}.`) : null,
    note.droppedOpenPicks ? h("li", null, `${n(note.droppedOpenPicks)} visits not yet taken into the model no longer count.`) : null,
  ].filter(Boolean);
  return h(
    "div",
    { class: "panel learned", tabindex: "-1" },
    h("h2", null, "Done. What happened to what was learned"),
    h("p", null, note.message),
    lists.length
      ? h("details", { class: "more" }, h("summary", null, `The model's numbers: ${n(note.keptFeatures)} kept, ${note.droppedFeatures.length} dropped, ${note.addedFeatures.length} new`), h("ul", null, lists))
      : null,
  );
}
