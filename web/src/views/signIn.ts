/** Sign-in: the admin token printed by `facetwise start`, checked with GET /session before it is kept. */
import { ApiError, checkToken } from "../api.ts";
import { h, replace } from "../dom.ts";
import { saveToken } from "../session.ts";
import { announce, type View } from "../shell.ts";

export function renderSignIn(main: HTMLElement, onSignedIn: () => void): View {
  document.title = "Sign in · facetwise";
  const token = h("input", {
    id: "token",
    name: "token",
    type: "password",
    autocomplete: "off",
    spellcheck: "false",
    required: true,
    "aria-describedby": "token-help",
  });
  const remember = h("input", { id: "remember", type: "checkbox" });
  const message = h("p", { class: "form-error", role: "alert" });
  const submit = h("button", { type: "submit", class: "primary" }, "Sign in");

  const form = h(
    "form",
    { class: "panel signin", "aria-labelledby": "signin-title" },
    h("h1", { id: "signin-title" }, "Sign in to facetwise"),
    h("label", { for: "token" }, "Admin token"),
    token,
    h(
      "p",
      { id: "token-help", class: "hint" },
      "The server printed it when it first started (",
      h("code", null, "npm start"),
      "), or it is the value of FACETWISE_ADMIN_TOKEN.",
    ),
    h("div", { class: "check" }, remember, h("label", { for: "remember" }, "Stay signed in on this device")),
    h("p", { class: "hint" }, "Otherwise the session ends when this tab closes. The token is never put in a web address."),
    message,
    submit,
  );
  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    const value = token.value.trim();
    if (!value) return;
    submit.disabled = true;
    message.textContent = "";
    try {
      await checkToken(value);
      saveToken(value, remember.checked);
      announce("Signed in.");
      onSignedIn();
    } catch (error) {
      message.textContent =
        error instanceof ApiError && error.status === 401
          ? "The server did not accept this token. Check it and try again."
          : error instanceof Error ? error.message : String(error);
      submit.disabled = false;
      token.focus();
    }
  });
  replace(main, form);
  token.focus();
  return { dispose() {} };
}
