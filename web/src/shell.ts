/** What views share with the shell: routes, the view handle, links and the screen-reader announcer. */

export interface Route { name: "list" | "new" | "page"; key?: string; tab?: string }

export interface View {
  /** Takes a new route without re-mounting; false when the route belongs to another view. */
  update?(route: Route): boolean;
  dispose(): void;
}

export function parseRoute(hash: string): Route {
  const parts = hash.replace(/^#\/?/, "").split("/").filter(Boolean).map(decodeURIComponent);
  if (parts[0] === "new") return { name: "new" };
  if (parts[0] === "p" && parts[1]) return { name: "page", key: parts[1], tab: parts[2] ?? "results" };
  return { name: "list" };
}

export function pageHref(key: string, tab?: string): string {
  return `#/p/${encodeURIComponent(key)}${tab ? `/${tab}` : ""}`;
}

/** Speaks a short message to screen readers (the visible page says it too). */
export function announce(message: string): void {
  const live = document.getElementById("live");
  if (!live) return;
  live.textContent = "";
  setTimeout(() => (live.textContent = message), 50);
}
