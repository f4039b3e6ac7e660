/**
 * Debian's Chromium for the browser suites: where it is, the flags the suites launch it with, and
 * what a machine without it does — skip with one line saying how to enable it, or fail when
 * FACETWISE_REQUIRE_BROWSER=1 (set by .ci/run) so a browser suite cannot pass by not running.
 */
import { existsSync } from "node:fs";
import { describe, it } from "vitest";

export const CHROMIUM = "/usr/bin/chromium";
export const haveChromium = existsSync(CHROMIUM);
export const CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
  "--no-first-run", "--disable-quic", "--disable-sync"];

/** Call at the top of a suite file: says the suite `name` was skipped, or fails it when Chromium is required. */
export function whenChromiumMissing(name: string): void {
  if (haveChromium) return;
  if (process.env.FACETWISE_REQUIRE_BROWSER !== "1") {
    console.log(`${name} skipped: /usr/bin/chromium is missing; enable it with \`apt-get install chromium\``);
    return;
  }
  describe(`${name} (required)`, () => {
    it("needs Chromium", () => {
      throw new Error("FACETWISE_REQUIRE_BROWSER=1 but /usr/bin/chromium is missing: run `apt-get install chromium`");
    });
  });
}
