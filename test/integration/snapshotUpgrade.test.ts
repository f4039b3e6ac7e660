/**
 * Upgrading a version-1 snapshot (accumulated sites, written before folds refitted from counts):
 * the fold service rebuilds the counts from the stored picks (src/service/modelState.ts), so the
 * first fold after the upgrade stores the same counts a page that never had a version-1 snapshot
 * stores — nothing learned is lost. Checked by construction against the page's own stored picks.
 */
import { describe, expect, it } from "vitest";
import { forEachDatabase } from "../support/databases.ts";
import { useHarness, testPage } from "./harness.ts";
import { loadSnapshot } from "../../src/store/repositories/folds.ts";

forEachDatabase("snapshot upgrade", (open) => {
  describe("a version-1 snapshot", () => {
    const h = useHarness(open);

    it("is rebuilt from the stored picks at the next fold, with every visitor and conversion kept", async () => {
      const created = await h.admin("POST", "/pages", testPage("upgrade-page", { settings: { attributionWindowHours: 1 } }));
      expect(created.status).toBe(201);
      const page = { key: "upgrade-page", publicKey: created.body.publicKey as string };
      const id = (await h.db.pool.query("SELECT id FROM page WHERE key = $1", [page.key])).rows[0].id as number;
      const picks: string[] = [];
      for (let i = 0; i < 30; i++) picks.push((await h.pick(page, `v${i}`, { source: i % 2 ? "search" : "social" })).body.pick);
      for (const pick of picks.slice(0, 7)) await h.outcome(page, { pick, event: `e-${pick}` });
      const first = await h.server.services.folds.foldPage(id, true);
      expect(first.folded).toBe(true);
      const version = first.folded ? first.version : 0;
      const current = (await loadSnapshot(h.db.pool, id, version))!.state as { featureNames: string[]; lastFoldAt: number; segmentSpread: number; segments: { segment: string; n: number[]; k: number[] }[] };

      // Overwrite the newest snapshot with what a version-1 server stored: sites, no counts.
      const legacy = {
        version: 1, featureNames: current.featureNames, lastFoldAt: current.lastFoldAt, segmentSpread: current.segmentSpread, dominated: {},
        sites: current.segments.map((s) => ({ segment: s.segment, lambdaUpper: [], eta: [], visitors: 0, conversions: 0, folds: 1 })),
      };
      await h.db.pool.query("UPDATE posterior_snapshot SET state = $3 WHERE page_id = $1 AND version = $2", [id, version, JSON.stringify(legacy)]);

      const next = await h.server.services.folds.foldPage(id, true);
      expect(next.folded).toBe(true);
      const upgraded = (await loadSnapshot(h.db.pool, id, next.folded ? next.version : 0))!.state as typeof current & { version: number };
      expect(upgraded.version).toBe(2);
      const totals = (s: typeof current) => ({
        visitors: s.segments.reduce((t, x) => t + x.n.reduce((a, b) => a + b, 0), 0),
        conversions: s.segments.reduce((t, x) => t + x.k.reduce((a, b) => a + b, 0), 0),
      });
      expect(totals(upgraded)).toEqual({ visitors: 30, conversions: 7 });
      expect(upgraded.segments.map((s) => s.segment).sort()).toEqual(current.segments.map((s) => s.segment).sort());
      const report = (await h.admin("GET", `/pages/${page.key}/report`)).body;
      expect(report.totals).toMatchObject({ visitors: 30, conversions: 7 });
    });
  });
});
