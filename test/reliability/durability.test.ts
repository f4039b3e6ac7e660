/**
 * "Acknowledged only after durably stored": under concurrent load writes share commits (group
 * commit), every acknowledged pick and outcome is in the database after a clean shutdown and a
 * reopen, and on PostgreSQL, connections killed mid-traffic (pg_terminate_backend) turn into
 * 503s — never into a 200 for something that was not stored.
 */
import { expect, it } from "vitest";
import { forEachDatabase } from "../support/databases.ts";
import { startHarness, testPage } from "../integration/harness.ts";

forEachDatabase("durability", (_open, target) => {
  it("groups concurrent writes into shared commits and keeps every acknowledged write across a shutdown", async () => {
    const storage = await target.storage();
    try {
      let db = await storage.open();
      let h = await startHarness(db);
      const created = (await h.admin("POST", "/pages", testPage("durable"))).body;
      const page = { key: "durable", publicKey: created.publicKey };
      const before = { ...h.server.services.batcher.stats };
      const replies = await Promise.all(Array.from({ length: 200 }, (_, i) => h.pick(page, `v${i}`, { source: i % 2 ? "a" : "b" })));
      expect(replies.every((r) => r.status === 200)).toBe(true);
      const stats = h.server.services.batcher.stats;
      expect(stats.writes - before.writes).toBe(200);
      // 200 concurrent writes took fewer than 200 commits
      expect(stats.batches - before.batches).toBeLessThan(200);
      expect(stats.largest).toBeGreaterThan(1);
      const outcomes = await Promise.all(replies.slice(0, 50).map((r, i) => h.outcome(page, { pick: r.body.pick, event: `o${i}` })));
      expect(outcomes.every((r) => r.status === 202)).toBe(true);
      await h.close();
      await db.close();

      db = await storage.open();
      const ids = replies.map((r) => r.body.pick);
      const stored = await db.pool.query("SELECT count(*)::int AS n FROM pick WHERE id = ANY($1::uuid[])", [ids]);
      expect(stored.rows[0].n).toBe(200);
      const conv = await db.pool.query("SELECT count(*)::int AS n FROM pick WHERE converted_at IS NOT NULL");
      expect(conv.rows[0].n).toBe(50);
      h = await startHarness(db);
      // sticky across the restart
      const again = await h.pick(page, "v7", { source: "a" });
      expect(again.body.pick).toBe(replies[7].body.pick);
      await h.close();
      await db.close();
    } finally {
      await storage.remove();
    }
  });

  it.runIf(target.kind === "postgres")("answers 503 when connections are killed mid-traffic and never acknowledges a lost write", async () => {
    const storage = await target.storage();
    const db = await storage.open();
    const h = await startHarness(db);
    try {
      const created = (await h.admin("POST", "/pages", testPage("killed"))).body;
      const page = { key: "killed", publicKey: created.publicKey };
      const database = new URL(db.url).pathname.slice(1);
      const killer = (async () => {
        const { default: pg } = await import("pg");
        const client = new pg.Client({ connectionString: process.env.TEST_DATABASE_URL });
        await client.connect();
        for (let i = 0; i < 5; i++) {
          await new Promise((r) => setTimeout(r, 60));
          await client.query("SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE datname = $1 AND pid <> pg_backend_pid()", [database]);
        }
        await client.end();
      })();
      const replies = [];
      for (let wave = 0; wave < 10; wave++) {
        replies.push(...await Promise.all(Array.from({ length: 20 }, (_, i) => h.pick(page, `w${wave}-${i}`))));
      }
      await killer;
      const statuses = new Set(replies.map((r) => r.status));
      for (const s of statuses) expect([200, 503]).toContain(s);
      const acknowledged = replies.filter((r) => r.status === 200).map((r) => r.body.pick);
      for (const r of replies.filter((x) => x.status === 503)) expect(r.headers.get("retry-after")).not.toBeNull();
      const stored = await db.pool.query("SELECT count(*)::int AS n FROM pick WHERE id = ANY($1::uuid[])", [acknowledged]);
      expect(stored.rows[0].n).toBe(acknowledged.length);
      // and it recovers: the pool reconnects
      const after = await h.pick(page, "after-the-storm");
      expect(after.status).toBe(200);
    } finally {
      await h.close();
      await db.close();
      await storage.remove();
    }
  });
});
