#!/usr/bin/env node
// Entry point for the `facetwise` command: runs the TypeScript CLI in a Node process with tsx's
// loader (not through the tsx wrapper, which relays signals to a child and may kill it before a
// clean shutdown finishes).
import { spawnSync } from "node:child_process";
import { fileURLToPath, pathToFileURL } from "node:url";
import { dirname, join } from "node:path";

const root = join(dirname(fileURLToPath(import.meta.url)), "..");
const loader = pathToFileURL(join(root, "node_modules", "tsx", "dist", "loader.mjs")).href;
const r = spawnSync(process.execPath, ["--import", loader, join(root, "src", "cli.ts"), ...process.argv.slice(2)], { stdio: "inherit" });
process.exit(r.status ?? 1);
