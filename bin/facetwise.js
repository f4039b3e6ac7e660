#!/usr/bin/env node
// Entry point for the `facetwise` command: runs the TypeScript CLI in a Node process with tsx's
// loader, forwarding SIGINT/SIGTERM so the server's clean shutdown runs to completion.
import { spawn } from "node:child_process";
import { fileURLToPath, pathToFileURL } from "node:url";
import { dirname, join } from "node:path";

const root = join(dirname(fileURLToPath(import.meta.url)), "..");
const loader = pathToFileURL(join(root, "node_modules", "tsx", "dist", "loader.mjs")).href;
const child = spawn(process.execPath, ["--import", loader, join(root, "src", "cli.ts"), ...process.argv.slice(2)], { stdio: "inherit" });
for (const signal of ["SIGINT", "SIGTERM"]) process.on(signal, () => child.kill(signal));
child.on("exit", (code, signal) => process.exit(code ?? (signal ? 1 : 0)));
