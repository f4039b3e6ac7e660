// Builds the console into web/dist: compiles web/src with tsc, then copies the static shell
// (web/static: index.html, console.css) beside the scripts. `node web/build.mjs` from the repo root.
import { execFileSync } from "node:child_process";
import { cpSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";

const web = dirname(fileURLToPath(import.meta.url));
execFileSync("npx", ["--no-install", "tsc", "-p", join(web, "tsconfig.json")], { stdio: "inherit" });
cpSync(join(web, "static"), join(web, "dist"), { recursive: true });
