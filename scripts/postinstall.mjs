// Runs after `npm install`: generates the Prisma client (offline, JS engine) and builds the console.
// Prisma 6 must resolve the datasource url at generate time or it tries to fetch a native engine,
// so a placeholder is given when DATABASE_URL is unset; nothing connects to it.
import { execFileSync } from "node:child_process";
import { existsSync } from "node:fs";

const env = { ...process.env, DATABASE_URL: process.env.DATABASE_URL || "postgresql://placeholder@127.0.0.1:5432/placeholder" };
const run = (cmd, args) => execFileSync(cmd, args, { stdio: "inherit", env });
run("npx", ["--no-install", "prisma", "generate"]);
// The console: tsc, then the static shell (HTML, CSS) copied into web/dist.
if (existsSync("web/build.mjs")) run("node", ["web/build.mjs"]);
