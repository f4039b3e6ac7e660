/**
 * The console shell: hash routes (#/, #/new, #/p/<key>/<tab>), the sign-in gate and the session
 * bar. Each view is mounted into <main> and returns a handle; a route change inside the same page
 * is passed to the mounted view so it keeps its scroll, open panels and form input.
 */
import { SIGNED_OUT } from "./api.ts";
import { h, replace } from "./dom.ts";
import { clearToken, getToken } from "./session.ts";
import { renderSignIn } from "./views/signIn.ts";
import { renderPageList } from "./views/pageList.ts";
import { renderEditor } from "./views/editor.ts";
import { renderPageView } from "./views/pageView.ts";
import { announce, parseRoute, type View } from "./shell.ts";

const main = document.getElementById("main") as HTMLElement;
const nav = document.getElementById("bar-nav") as HTMLElement;
let current: View | null = null;

function renderBar(): void {
  if (!getToken()) {
    replace(nav);
    return;
  }
  replace(
    nav,
    h("a", { href: "#/", class: "bar-link" }, "Pages"),
    h("a", { href: "#/new", class: "bar-link" }, "New page"),
    h("button", { type: "button", class: "quiet", onclick: signOut }, "Sign out"),
  );
}

function signOut(): void {
  clearToken();
  announce("Signed out.");
  route();
}

function route(): void {
  renderBar();
  const next = parseRoute(location.hash);
  if (!getToken()) {
    current?.dispose();
    current = renderSignIn(main, () => route());
    return;
  }
  if (current?.update?.(next)) return;
  current?.dispose();
  main.replaceChildren();
  window.scrollTo(0, 0);
  if (next.name === "new") current = renderEditor(main);
  else if (next.name === "page") current = renderPageView(main, next);
  else current = renderPageList(main);
  // a new view: keyboard and screen-reader users start at its content, not back in the top bar
  if (!main.contains(document.activeElement)) main.focus({ preventScroll: true });
}

window.addEventListener("hashchange", route);
window.addEventListener(SIGNED_OUT, () => {
  announce("The server did not accept the admin token; please sign in again.");
  route();
});
route();
