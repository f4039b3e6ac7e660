/**
 * Starts `facetwise start --port 0` (embedded database, temp data folder) for the browser suites and
 * reads the console address and admin token it prints; `stop()` ends it and removes the folder.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

export interface Server { url: string; token: string; child: ChildProcess; dataDir: string; stop(): Promise<void> }

export const root = join(import.meta.dirname, "..", "..");

export async function startServer(): Promise<Server> {
  const dataDir = mkdtempSync(join(tmpdir(), "facetwise-browser-"));
  const child = spawn(process.execPath, ["--import", "tsx", "src/cli.ts", "start", "--port", "0", "--data", dataDir], {
    cwd: root,
    env: { ...process.env, DATABASE_URL: "", FACETWISE_ADMIN_TOKEN: "" },
    stdio: ["ignore", "pipe", "pipe"],
  });
  let out = "";
  child.stdout?.on("data", (chunk: Buffer) => (out += chunk.toString()));
  child.stderr?.on("data", (chunk: Buffer) => (out += chunk.toString()));
  const stop = async () => {
    if (child.exitCode === null) {
      child.kill("SIGTERM");
      await new Promise((r) => child.once("exit", r));
    }
    rmSync(dataDir, { recursive: true, force: true });
  };
  const deadline = Date.now() + 120_000;
  while (Date.now() < deadline) {
    const url = /console:\s+(http:\/\/\S+?)\/?\s/.exec(out)?.[1];
    const token = /admin token[^\n]*\n\s+(\S+)/.exec(out)?.[1];
    if (url && token && out.includes("Press Ctrl-C")) return { url, token, child, dataDir, stop };
    if (child.exitCode !== null) break;
    await new Promise((r) => setTimeout(r, 200));
  }
  await stop();
  throw new Error(`facetwise start did not come up:\n${out}`);
}
