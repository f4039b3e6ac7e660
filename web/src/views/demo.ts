/**
 * The demo page's traffic control: sends simulated visitors, drawn from the demo's own hidden truth,
 * through the server's real pick and outcome paths, so a newcomer can watch learning happen.
 */
import { api } from "../api.ts";
import { h } from "../dom.ts";
import { n } from "../format.ts";
import { announce } from "../shell.ts";
import type { Page } from "../types.ts";

export function demoControl(page: Page, onStarted: () => void): HTMLElement {
  const amount = h(
    "select",
    { id: "demo-visitors", name: "visitors" },
    [500, 2000, 5000, 20000].map((v) => h("option", { value: String(v), selected: v === 2000 }, `${n(v)} visitors`)),
  );
  const note = h("p", { class: "hint", role: "status" });
  const send = h("button", { type: "submit", class: "primary" }, "Send demo visitors");
  const form = h(
    "form",
    { class: "panel demo", "aria-labelledby": "demo-title" },
    h("div", { class: "demo-text" },
      h("h2", { id: "demo-title" }, "Demo traffic"),
      h("p", { class: "hint" }, "Simulated visitors from this demo's hidden truth go through the same pick and conversion paths as real ones. Watch leaders emerge and losers retire within a minute.")),
    h("div", { class: "demo-controls" }, h("label", { for: "demo-visitors" }, "How many"), amount, send),
    note,
  );
  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    send.disabled = true;
    try {
      const out = await api<{ accepted: number; running: boolean }>("POST", `/pages/${encodeURIComponent(page.key)}/demo-traffic`, { visitors: Number(amount.value) });
      note.textContent = `Sending ${n(out.accepted)} visitors… the figures below refresh every few seconds.`;
      announce(note.textContent);
      onStarted();
    } catch (error) {
      note.textContent = (error as Error).message;
    } finally {
      send.disabled = false;
    }
  });
  return form;
}
