/**
 * kill -9 of the server under concurrent picks and outcomes (issue 11): a real `facetwise start`
 * process folding every second takes 16 concurrent visitors (pick, then conversion), and is killed
 * with SIGKILL mid-traffic. After it, every acknowledged pick (200) and every conversion
 * acknowledged as counted (202) is stored exactly once, and after the next fold each of those
 * conversions is folded exactly once (k summed over the folds = converted picks). One kill of
 * ~300 acknowledged writes in CI; three kills of ~2,000 with FACETWISE_RELIABILITY_SCALE=nightly.
 */
import { expect, it } from "vitest";
import { spawn, type ChildProcess } from "node:child_process";
import { fileURLToPath } from "node:url";
import { forEachDatabase } from "../support/databases.ts";
import { ADMIN_TOKEN, startHarness, testPage } from "../integration/harness.ts";
import { foldedRows } from "../../src/store/repositories/folds.ts";
import { size } from "./scale.ts";

const ROOT = fileURLToPath(new URL("../../", import.meta.url));

async function startChild(location: string, kind: string): Promise<{ child: ChildProcess; url: string }> {
  const args = ["--import", "tsx", "src/cli.ts", "start", "--port", "0", "--no-demo", ...(kind === "embedded" ? ["--data", location] : [])];
  const child = spawn(process.execPath, args, {
    cwd: ROOT, stdio: ["ignore", "pipe", "pipe"],
    env: { ...process.env, DATABASE_URL: kind === "embedded" ? "" : location, FACETWISE_ADMIN_TOKEN: ADMIN_TOKEN },
  });
  let out = "";
  child.stdout!.on("data", (d) => (out += d));
  child.stderr!.on("data", (d) => (out += d));
  const deadline = Date.now() + 120_000;
  while (Date.now() < deadline) {
    const url = /console:\s+(http:\/\/\S+?)\/?\s/.exec(out)?.[1];
    if (url && out.includes("Press Ctrl-C")) return { child, url };
    if (child.exitCode !== null) break;
    await new Promise((r) => setTimeout(r, 100));
  }
  child.kill("SIGKILL");
  throw new Error(`facetwise start did not come up:\n${out}`);
}

forEachDatabase("kill -9 under load", (_open, target) => {
  it("keeps every acknowledged pick and conversion exactly once, and folds each conversion once", { timeout: 1_800_000 }, async () => {
    const rounds = size(1, 3);
    const acknowledgedPerRound = size(300, 2000);
    const storage = await target.storage();
    const picks = new Set<string>();
    const counted = new Map<string, string>(); // pick → event
    let pageKey = "";
    let publicKey = "";
    try {
      for (let round = 0; round < rounds; round++) {
        const { child, url } = await startChild(storage.location, target.kind);
        const call = (path: string, body: unknown, headers: Record<string, string>) =>
          fetch(url + path, { method: "POST", headers: { "content-type": "application/json", ...headers }, body: JSON.stringify(body), signal: AbortSignal.timeout(20_000) });
        if (round === 0) {
          // limits raised: every visitor comes from 127.0.0.1
          const created = await call("/api/v1/pages", testPage("killed", { settings: { foldIntervalSeconds: 1, addressRequestsPerMinute: 1_000_000, pageRequestsPerMinute: 100_000_000 } }), { authorization: `Bearer ${ADMIN_TOKEN}` });
          expect(created.status).toBe(201);
          pageKey = "killed";
          publicKey = (await created.json()).publicKey;
        }
        let acknowledged = 0;
        let next = 0;
        let killed = false;
        const exited = new Promise((resolve) => child.once("exit", resolve));
        const worker = async () => {
          while (!killed) {
            const visitor = `r${round}-v${next++}`;
            try {
              const pick = await call(`/api/v1/pages/${pageKey}/picks`, { visitor, context: { source: `s${next % 3}` } }, { "x-page-key": publicKey });
              if (pick.status !== 200) continue;
              const body = await pick.json();
              picks.add(body.pick);
              acknowledged += 1;
              const event = `e-${visitor}`;
              const outcome = await call(`/api/v1/pages/${pageKey}/outcomes`, { pick: body.pick, event }, { "x-page-key": publicKey });
              if (outcome.status === 202 && (await outcome.json()).counted) {
                counted.set(body.pick, event);
                acknowledged += 1;
              }
            } catch {
              // the server died under this request: nothing was acknowledged
            }
            if (acknowledged >= acknowledgedPerRound && !killed) {
              killed = true;
              child.kill("SIGKILL");
            }
          }
        };
        await Promise.all(Array.from({ length: 16 }, worker));
        await exited;
        console.log(`kill -9 on ${target.label}, round ${round + 1}: killed after ${acknowledged} acknowledged writes (${picks.size} picks, ${counted.size} conversions so far)`);
      }

      // reopen the same storage in this process and check, then fold once more
      const h = await startHarness(await storage.open());
      try {
        const stored = await h.db.pool.query<{ id: string; outcomes: number; events: string[]; converted: boolean }>(
          `SELECT p.id, count(o.id)::int AS outcomes, array_agg(o.event) FILTER (WHERE o.id IS NOT NULL) AS events, p.converted_at IS NOT NULL AS converted
           FROM pick p LEFT JOIN outcome o ON o.pick_id = p.id GROUP BY p.id`);
        const byId = new Map(stored.rows.map((r) => [r.id, r]));
        const missingPicks = [...picks].filter((id) => !byId.has(id));
        const badConversions = [...counted].filter(([pick, event]) => {
          const row = byId.get(pick);
          return !row || !row.converted || row.outcomes !== 1 || row.events[0] !== event;
        });
        expect(missingPicks).toEqual([]);
        expect(badConversions).toEqual([]);
        const pageId = (await h.db.pool.query("SELECT id FROM page WHERE key = $1", [pageKey])).rows[0].id as number;
        await h.server.services.folds.foldPage(pageId, true);
        const folds = await foldedRows(h.db.pool, pageId);
        const k = folds.reduce((sum, r) => sum + r.k, 0);
        const n = folds.reduce((sum, r) => sum + r.n, 0);
        const converted = stored.rows.filter((r) => r.converted).length;
        console.log(`kill -9 on ${target.label}: ${rounds} kills, ${picks.size} acknowledged picks and ${counted.size} acknowledged conversions all stored once; after the next fold n = ${n} of ${stored.rows.length} stored picks, k = ${k} of ${converted} converted`);
        expect(k).toBe(converted);
        expect(n).toBe(stored.rows.length);
      } finally {
        await h.close();
        await h.db.close();
      }
    } finally {
      await storage.remove();
    }
  });
});
