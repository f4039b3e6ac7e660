/**
 * Pick latency benchmark: what one pick costs end to end over loopback HTTP (fetch → express →
 * sticky lookup → allocation draw → group-committed insert → JSON reply), on the embedded
 * database or on a real PostgreSQL. Prints figures; asserts nothing (speed targets are not tests).
 *
 *   npm run bench:http                                   # embedded database in a temp folder
 *   npm run bench:http -- --url postgresql://postgres@127.0.0.1:5432/facetwise_bench
 *   npm run bench:http -- --picks 5000 --concurrency 16
 */
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { parseArgs } from "node:util";
import { openDatabase } from "../../src/store/database.ts";
import { startServer } from "../../src/http/server.ts";

const { values } = parseArgs({
  options: { url: { type: "string" }, picks: { type: "string", default: "2000" }, concurrency: { type: "string", default: "16" } },
});
const picks = Number(values.picks);
const concurrency = Number(values.concurrency);
const token = "fw_admin_bench";

const dataDir = values.url ? undefined : mkdtempSync(join(tmpdir(), "facetwise-bench-"));
const db = await openDatabase({ url: values.url, dataDir, migrate: true });
const server = await startServer(db, { adminToken: token, foldLoop: false, webDir: null });
const pageKey = `bench-${Date.now().toString(36)}`;

async function call(path: string, body: unknown, headers: Record<string, string>): Promise<{ status: number; json: any }> {
  const res = await fetch(server.url + path, { method: "POST", headers: { "content-type": "application/json", ...headers }, body: JSON.stringify(body) });
  return { status: res.status, json: await res.json() };
}

const quantile = (sorted: number[], q: number) => sorted[Math.min(sorted.length - 1, Math.floor(q * sorted.length))];
function summary(label: string, ms: number[]): void {
  const sorted = ms.slice().sort((a, b) => a - b);
  const mean = ms.reduce((s, x) => s + x, 0) / ms.length;
  console.log(`${label.padEnd(34)} n=${String(ms.length).padStart(5)}  median ${quantile(sorted, 0.5).toFixed(2)} ms  p95 ${quantile(sorted, 0.95).toFixed(2)} ms  p99 ${quantile(sorted, 0.99).toFixed(2)} ms  mean ${mean.toFixed(2)} ms`);
}

try {
  // a page the size of a typical landing page: 3×3×2×2×2 = 72 combinations, 3 segments
  const page = await call("/api/v1/pages", {
    key: pageKey, name: "Benchmark page", segmentBy: ["source"],
    factors: [
      { name: "headline", levels: [{ name: "a" }, { name: "b" }, { name: "c" }] },
      { name: "hero", levels: [{ name: "a" }, { name: "b" }, { name: "c" }] },
      { name: "cta", levels: [{ name: "a" }, { name: "b" }] },
      { name: "colour", levels: [{ name: "a" }, { name: "b" }] },
      { name: "layout", levels: [{ name: "a" }, { name: "b" }] },
    ],
  }, { authorization: `Bearer ${token}` });
  if (page.status !== 201) throw new Error(`could not create the page: ${JSON.stringify(page.json)}`);
  const headers = { "x-page-key": page.json.publicKey as string };
  const sources = ["search", "social", "newsletter"];
  const pick = async (visitor: string, i: number) => {
    const start = performance.now();
    const r = await call(`/api/v1/pages/${pageKey}/picks`, { visitor, context: { source: sources[i % 3] } }, headers);
    const ms = performance.now() - start;
    if (r.status !== 200) throw new Error(`pick failed: ${r.status} ${JSON.stringify(r.json)}`);
    return ms;
  };

  for (let i = 0; i < 200; i++) await pick(`warm-${i}`, i); // JIT, caches, segments

  const sequential: number[] = [];
  for (let i = 0; i < picks; i++) sequential.push(await pick(`seq-${i}`, i));
  const sticky: number[] = [];
  for (let i = 0; i < Math.min(picks, 1000); i++) sticky.push(await pick(`seq-${i}`, i));

  const concurrent: number[] = [];
  let next = 0;
  const started = performance.now();
  await Promise.all(Array.from({ length: concurrency }, async () => {
    while (next < picks) {
      const i = next++;
      concurrent.push(await pick(`par-${i}`, i));
    }
  }));
  const seconds = (performance.now() - started) / 1000;

  console.log(`facetwise pick latency over loopback HTTP — ${db.kind === "embedded" ? "embedded database (PGlite)" : "PostgreSQL"}, node ${process.version}`);
  summary("new visitor, one at a time", sequential);
  summary("returning visitor (sticky)", sticky);
  summary(`new visitor, ${concurrency} concurrent`, concurrent);
  const stats = server.services.batcher.stats;
  console.log(`throughput with ${concurrency} concurrent clients: ${(picks / seconds).toFixed(0)} picks/s; ` +
    `group commit: ${stats.writes} writes in ${stats.batches} transactions (largest ${stats.largest})`);
} finally {
  await server.close();
  if (values.url) await db.pool.query("DELETE FROM page WHERE key = $1", [pageKey]).catch(() => undefined);
  await db.close();
  if (dataDir) rmSync(dataDir, { recursive: true, force: true });
}
