/**
 * Shows the server's own validation message: always in the form's problem box, and also beside
 * the input its `field` path points at (the nearest enclosing field when there is no exact one).
 */
import { h, replace } from "../dom.ts";
import type { ApiError } from "../api.ts";

/** "factors[1].levels[0].name" and "factors/1/levels/0/name" → "factors.1.levels.0.name". */
export function normaliseField(field: string): string {
  return field.replace(/\[(\d+)\]/g, ".$1").replace(/[/]/g, ".").replace(/^\.+/, "");
}

export function showFieldErrors(root: HTMLElement, problems: HTMLElement, error: ApiError | null): void {
  for (const el of root.querySelectorAll<HTMLElement>("[data-error-for]")) el.textContent = "";
  for (const el of root.querySelectorAll<HTMLElement>("[aria-invalid]")) el.removeAttribute("aria-invalid");
  if (!error) {
    replace(problems);
    return;
  }
  replace(problems, h("p", { class: "problem" }, h("span", { class: "problem-mark", "aria-hidden": "true" }, "!"), " ", error.message));
  if (!error.field) return;
  let path = normaliseField(error.field);
  while (path) {
    // exact path first; a bare name (a setting's "attributionWindowHours") matches the field ending in it
    const slot =
      root.querySelector<HTMLElement>(`[data-error-for="${CSS.escape(path)}"]`) ??
      root.querySelector<HTMLElement>(`[data-error-for$=".${CSS.escape(path)}"]`);
    const input =
      root.querySelector<HTMLElement>(`[data-field="${CSS.escape(path)}"]`) ??
      root.querySelector<HTMLElement>(`[data-field$=".${CSS.escape(path)}"]`);
    if (slot || input) {
      if (slot) slot.textContent = error.message;
      input?.setAttribute("aria-invalid", "true");
      return;
    }
    path = path.includes(".") ? path.slice(0, path.lastIndexOf(".")) : "";
  }
}
