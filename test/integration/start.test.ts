/**
 * `facetwise start` as a user runs it: a child process on a fresh data folder prints the console
 * URL and the admin token once, seeds the demo page, serves the API and the console, stops cleanly
 * on SIGTERM (exit 0), and on the next start keeps its data and does not print the token again;
 * then `facetwise export` prints that data.
 */
import { expect, it } from "vitest";
import { spawn } from "node:child_process";
import { existsSync, mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

const root = new URL("../../", import.meta.url).pathname;
// One process, as `node --import tsx` runs it: the tsx CLI wrapper relays signals to a child and
// SIGKILLs it when the child does not acknowledge within 30 ms, which a loaded machine misses.

async function run(args: string[]): Promise<{ code: number | null; stdout: string; stderr: string }> {
  const child = spawn(process.execPath, ["--import", "tsx", join(root, "src/cli.ts"), ...args], {
    cwd: root, env: { ...process.env, DATABASE_URL: "" }, stdio: ["ignore", "pipe", "pipe"],
  });
  let stdout = "";
  let stderr = "";
  child.stdout.on("data", (chunk) => (stdout += chunk));
  child.stderr.on("data", (chunk) => (stderr += chunk));
  const code = await new Promise<number | null>((resolve) => child.on("exit", resolve));
  return { code, stdout, stderr };
}

interface Started { output: () => string; url: string; stop(): Promise<number | null> }

async function start(dataDir: string): Promise<Started> {
  const child = spawn(process.execPath, ["--import", "tsx", join(root, "src/cli.ts"), "start", "--port", "0", "--data", dataDir], {
    cwd: root, env: { ...process.env, DATABASE_URL: "", FACETWISE_ADMIN_TOKEN: "" }, stdio: ["ignore", "pipe", "pipe"],
  });
  let output = "";
  child.stdout.on("data", (chunk) => (output += chunk));
  child.stderr.on("data", (chunk) => (output += chunk));
  const exited = new Promise<number | null>((resolve) => child.on("exit", (code) => resolve(code)));
  const deadline = Date.now() + 90_000;
  while (!output.includes("Press Ctrl-C")) {
    if (Date.now() > deadline || child.exitCode !== null) throw new Error(`start did not come up:\n${output}`);
    await new Promise((r) => setTimeout(r, 100));
  }
  const url = /console:\s+(http:\/\/\S+?)\/\s/.exec(output)![1];
  return { output: () => output, url, stop: () => (child.kill("SIGTERM"), exited) };
}

it("starts, prints the URL and token once, seeds the demo, serves, and stops cleanly", async () => {
  const dataDir = mkdtempSync(join(tmpdir(), "facetwise-start-"));
  try {
    const first = await start(dataDir);
    const token = /admin token \(shown once[^\n]*\n\s+(fw_admin_\S+)/.exec(first.output())?.[1];
    expect(token).toBeDefined();
    expect(first.output()).toMatch(/demo page "bike-repair-demo" created/);
    expect((await fetch(`${first.url}/healthz`)).status).toBe(200);
    const session = await fetch(`${first.url}/api/v1/session`, { headers: { authorization: `Bearer ${token}` } });
    expect(session.status).toBe(200);
    expect((await fetch(`${first.url}/api/v1/session`, { headers: { authorization: "Bearer nope" } })).status).toBe(401);
    if (existsSync(join(root, "web/dist/index.html"))) {
      const page = await fetch(`${first.url}/`);
      expect(page.status).toBe(200);
      expect(page.headers.get("content-type")).toMatch(/text\/html/);
    }
    // stop while the demo visitors are still streaming
    expect(await first.stop()).toBe(0);
    expect(first.output()).toMatch(/facetwise: stopped/);

    const second = await start(dataDir);
    expect(second.output()).not.toMatch(/fw_admin_/);
    expect(second.output()).not.toMatch(/demo page .* created/);
    const pages = await fetch(`${second.url}/api/v1/pages`, { headers: { authorization: `Bearer ${token}` } });
    const body = await pages.json() as { pages: { key: string; totals: { visitors: number } }[] };
    expect(body.pages.map((p) => p.key)).toEqual(["bike-repair-demo"]);
    expect(body.pages[0].totals.visitors).toBeGreaterThan(0);
    expect(await second.stop()).toBe(0);

    // facetwise export on the stopped server's data: RFC 4180 CSV on stdout, exit 0
    const csv = await run(["export", "bike-repair-demo", "--format", "csv", "--data", dataDir]);
    expect(csv.code).toBe(0);
    expect(csv.stdout.split("\r\n")[0]).toMatch(/^segment,status,combination,probability_best,probability_best_se,probability_best_mc_lower,probability_best_mc_upper,rate_mean,rate_lower,rate_upper,headline,headline_value,/);
    // an error is one clear line on stderr and a non-zero exit
    const missing = await run(["export", "no-such-page", "--data", dataDir]);
    expect(missing.code).toBe(1);
    expect(missing.stderr.trim().split("\n")).toHaveLength(1);
    expect(missing.stderr).toMatch(/^facetwise: No page with key "no-such-page"/);
  } finally {
    rmSync(dataDir, { recursive: true, force: true });
  }
}, 240_000);
