/**
 * Pick latency benchmark: what one pick costs end to end over loopback HTTP (HTTP parse →
 * express → sticky lookup → allocation draw → durable insert → JSON reply), on the embedded
 * database or on a real PostgreSQL. The server runs in this process; the HTTP client runs in a
 * child process so the two do not share an event loop. Prints figures; asserts nothing (speed
 * targets are not tests).
 *
 *   npm run bench:http                                   # embedded database in a temp folder
 *   npm run bench:http -- --url postgresql://postgres@127.0.0.1:5432/facetwise_bench
 *   npm run bench:http -- --picks 5000 --concurrency 16
 */
import { spawn } from "node:child_process";
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir, loadavg, cpus } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import { parseArgs } from "node:util";
import { quantileInPlace } from "../../src/model/index.ts";

const { values } = parseArgs({
  options: {
    url: { type: "string" }, picks: { type: "string", default: "2000" }, concurrency: { type: "string", default: "16" },
    client: { type: "string" }, key: { type: "string" }, page: { type: "string" },
  },
});
const picks = Number(values.picks);
const concurrency = Number(values.concurrency);

if (values.client) await runClient(values.client, values.page!, values.key!);
else await runServer();

/** The client side: sequential new visitors, returning visitors, then concurrent new visitors. */
async function runClient(base: string, pageKey: string, publicKey: string): Promise<void> {
  const sources = ["search", "social", "newsletter"];
  const pick = async (visitor: string, i: number) => {
    const start = performance.now();
    const res = await fetch(`${base}/api/v1/pages/${pageKey}/picks`, {
      method: "POST", headers: { "content-type": "application/json", "x-page-key": publicKey },
      body: JSON.stringify({ visitor, context: { source: sources[i % 3] } }),
    });
    await res.arrayBuffer();
    if (res.status !== 200) throw new Error(`pick failed: ${res.status}`);
    return performance.now() - start;
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
  process.stdout.write(JSON.stringify({ sequential, sticky, concurrent, throughput: picks / seconds }));
}

async function runServer(): Promise<void> {
  const { openDatabase } = await import("../../src/store/database.ts");
  const { startServer } = await import("../../src/http/server.ts");
  const token = "fw_admin_bench";
  const dataDir = values.url ? undefined : mkdtempSync(join(tmpdir(), "facetwise-bench-"));
  const db = await openDatabase({ url: values.url, dataDir, migrate: true });
  const server = await startServer(db, { adminToken: token, foldLoop: false, webDir: null, rateLimits: false }); // one client address sends every pick
  const pageKey = `bench-${Date.now().toString(36)}`;
  try {
    // a page the size of a typical landing page: 3×3×2×2×2 = 72 combinations, 3 segments
    const res = await fetch(`${server.url}/api/v1/pages`, {
      method: "POST", headers: { "content-type": "application/json", authorization: `Bearer ${token}` },
      body: JSON.stringify({
        key: pageKey, name: "Benchmark page", segmentBy: ["source"],
        factors: [[3, "headline"], [3, "hero"], [2, "cta"], [2, "colour"], [2, "layout"]].map(([n, name]) => ({
          name, levels: Array.from({ length: n as number }, (_, i) => ({ name: `level-${i}` })),
        })),
      }),
    });
    const page = await res.json() as { publicKey: string };
    if (res.status !== 201) throw new Error(`could not create the page: ${JSON.stringify(page)}`);

    const child = spawn(process.execPath, ["--import", "tsx", fileURLToPath(import.meta.url),
      "--client", server.url, "--page", pageKey, "--key", page.publicKey, "--picks", String(picks), "--concurrency", String(concurrency)],
      { stdio: ["ignore", "pipe", "inherit"] });
    let output = "";
    child.stdout.on("data", (chunk) => (output += chunk));
    const code = await new Promise<number | null>((resolve) => child.on("exit", resolve));
    if (code !== 0) throw new Error(`the benchmark client failed (exit ${code})`);
    const result = JSON.parse(output) as { sequential: number[]; sticky: number[]; concurrent: number[]; throughput: number };

    const quantile = (values: number[], q: number) => quantileInPlace(Float64Array.from(values), q);
    const line = (label: string, ms: number[]) => {
      const mean = ms.reduce((s, x) => s + x, 0) / ms.length;
      console.log(`${label.padEnd(34)} n=${String(ms.length).padStart(5)}  median ${quantile(ms, 0.5).toFixed(2)} ms  p95 ${quantile(ms, 0.95).toFixed(2)} ms  p99 ${quantile(ms, 0.99).toFixed(2)} ms  mean ${mean.toFixed(2)} ms`);
    };
    console.log(`facetwise pick latency over loopback HTTP — ${db.kind === "embedded" ? "embedded database (PGlite)" : "PostgreSQL"}, node ${process.version}, ` +
      `${cpus().length} CPUs, load average ${loadavg()[0].toFixed(1)}`);
    line("new visitor, one at a time", result.sequential);
    line("returning visitor (sticky)", result.sticky);
    line(`new visitor, ${concurrency} concurrent`, result.concurrent);
    const stats = server.services.batcher.stats;
    console.log(`throughput with ${concurrency} concurrent clients: ${result.throughput.toFixed(0)} picks/s; ` +
      `group commit: ${stats.writes} writes in ${stats.batches} commits (largest ${stats.largest})`);
  } finally {
    await server.close();
    if (values.url) await db.pool.query("DELETE FROM page WHERE key = $1", [pageKey]).catch(() => undefined);
    await db.close();
    if (dataDir) rmSync(dataDir, { recursive: true, force: true });
  }
}
