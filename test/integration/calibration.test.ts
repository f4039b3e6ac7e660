/**
 * Prequential calibration through the real server: every pick stores the predicted rate its
 * segment's allocation listed for the served combination at the version that served it, and the
 * report's calibration (bins formed in SQL) equals a hand computation over the stored picks whose
 * attribution window closed — equal-count bins by predicted rate (ties kept together), Wilson 95% intervals
 * (Wilson 1927: the closed form is spelled out below), log loss (Good 1952) and its skill against
 * the constant observed rate.
 */
import { describe, expect, it } from "vitest";
import { forEachDatabase } from "../support/databases.ts";
import { useHarness, testPage } from "./harness.ts";

interface Scored { id: string; segment: string; p: number; y: 0 | 1 }

/**
 * The rule stated in src/model/calibration.ts, written out again: a pick with s of the n picks
 * predicted lower goes to bin ⌊s·B/n⌋, B = max(1, min(10, ⌊n/100⌋)) — so ties share a bin.
 */
function handCalibration(picks: Scored[]) {
  const n = picks.length;
  const B = Math.max(1, Math.min(10, Math.floor(n / 100)));
  const byBin = new Map<number, Scored[]>();
  for (const pick of picks) {
    const below = picks.filter((o) => o.p < pick.p).length;
    const bin = Math.floor((below * B) / n);
    byBin.set(bin, [...(byBin.get(bin) ?? []), pick]);
  }
  const bins = [...byBin.entries()].sort((a, b) => a[0] - b[0]).map(([, members]) => members.sort((a, b) => a.p - b.p));
  const z = 1.959963984540054; // Φ⁻¹(0.975)
  const wilson = (k: number, m: number) => {
    const q = k / m;
    const centre = (q + (z * z) / (2 * m)) / (1 + (z * z) / m);
    const half = (z / (1 + (z * z) / m)) * Math.sqrt((q * (1 - q)) / m + (z * z) / (4 * m * m));
    return [centre - half, centre + half];
  };
  const ybar = picks.reduce((s, x) => s + x.y, 0) / n;
  const logLoss = picks.reduce((s, x) => s - (x.y ? Math.log(x.p) : Math.log(1 - x.p)), 0) / n;
  const brier = picks.reduce((s, x) => s + (x.p - x.y) ** 2, 0) / n;
  return {
    picks: n,
    conversions: picks.reduce((s, x) => s + x.y, 0),
    bins: bins.map((b) => {
      const k = b.reduce((s, x) => s + x.y, 0);
      const [lower, upper] = wilson(k, b.length);
      return { picks: b.length, conversions: k, predicted: b.reduce((s, x) => s + x.p, 0) / b.length, observed: k / b.length, lower, upper, from: b[0].p, to: b[b.length - 1].p };
    }),
    logLoss,
    logLossSkill: 1 - logLoss / -(ybar * Math.log(ybar) + (1 - ybar) * Math.log(1 - ybar)),
    brierSkill: 1 - brier / (ybar * (1 - ybar)),
  };
}

function expectSame(actual: any, expected: ReturnType<typeof handCalibration>) {
  expect(actual.enough).toBe(true);
  expect(actual.picks).toBe(expected.picks);
  expect(actual.conversions).toBe(expected.conversions);
  expect(actual.bins).toHaveLength(expected.bins.length);
  actual.bins.forEach((b: any, i: number) => {
    const e = expected.bins[i];
    expect(b.picks).toBe(e.picks);
    expect(b.conversions).toBe(e.conversions);
    for (const field of ["predicted", "observed", "lower", "upper", "from", "to"] as const) expect(b[field]).toBeCloseTo(e[field], 10);
  });
  expect(actual.logLoss).toBeCloseTo(expected.logLoss, 10);
  expect(actual.logLossSkill).toBeCloseTo(expected.logLossSkill, 10);
  expect(actual.brierSkill).toBeCloseTo(expected.brierSkill, 10);
}

forEachDatabase("prequential calibration", (open) => {
  describe("picks store their prediction; the report scores closed windows", () => {
    const h = useHarness(open);

    it("stores the allocation's predicted rate with each pick and reports calibration equal to a hand computation", async () => {
      const created = await h.admin("POST", "/pages", testPage("calibrated", { settings: { attributionWindowHours: 1 } }));
      expect(created.status).toBe(201);
      const page = { key: "calibrated", publicKey: created.body.publicKey as string };
      const pageId = (await h.db.pool.query("SELECT id FROM page WHERE key = $1", ["calibrated"])).rows[0].id as number;
      const serve = async (from: number, to: number, source: string) => {
        for (let i = from; i < to; i++) {
          const r = await h.pick(page, `${source}-${i}`, { source });
          expect(r.status).toBe(200);
          // a deterministic spread of conversions that depends on the combination served
          if (i % (r.body.key.includes("photo=tools") ? 4 : 9) === 0) expect((await h.outcome(page, { pick: r.body.pick, event: `e-${source}-${i}` })).status).toBe(202);
        }
      };
      await serve(0, 160, "search");
      await serve(0, 15, "social");
      await h.server.services.folds.foldPage(pageId, true);
      await serve(160, 330, "search");
      await serve(15, 30, "social");
      await h.server.services.folds.foldPage(pageId, true);
      await serve(330, 350, "search"); // windows still open: not scored

      // Every pick carries exactly the prediction listed at its version by the allocation that served
      // it: its segment's, or the new-traffic one ("*") while the segment had none of its own.
      const stored = (await h.db.pool.query(
        `SELECT p.id, p.combination, p.predicted_rate, p.model_version, coalesce(own.allocation, pooled.allocation) AS allocation
         FROM pick p LEFT JOIN segment s ON s.id = p.segment_id
         LEFT JOIN allocation_record own ON own.page_id = p.page_id AND own.version = p.model_version AND own.segment = s.key
         JOIN allocation_record pooled ON pooled.page_id = p.page_id AND pooled.version = p.model_version AND pooled.segment = '*'
         WHERE p.page_id = $1`, [pageId])).rows;
      expect(stored).toHaveLength(380);
      expect(new Set(stored.map((r) => r.model_version)).size).toBeGreaterThan(1);
      for (const r of stored) {
        const listed = r.allocation.predicted[r.allocation.keys.indexOf(r.combination)];
        expect(listed).toBeGreaterThan(0);
        expect(r.predicted_rate).toBe(listed);
      }

      // Close the windows of all but the last 20 search picks (time passing, without waiting an hour).
      await h.db.pool.query(
        `UPDATE pick SET window_ends_at = now() - interval '1 second'
         WHERE page_id = $1 AND visitor NOT IN (SELECT 'search-' || i FROM generate_series(330, 349) AS i)`, [pageId]);
      const scored: Scored[] = (await h.db.pool.query(
        `SELECT p.id, coalesce(s.key, '*') AS segment, p.predicted_rate AS p, (p.converted_at IS NOT NULL) AS y
         FROM pick p LEFT JOIN segment s ON s.id = p.segment_id WHERE p.page_id = $1 AND p.window_ends_at < now()`, [pageId]))
        .rows.map((r) => ({ id: r.id, segment: r.segment, p: r.p, y: r.y ? 1 : 0 }));
      expect(scored).toHaveLength(360);

      const report = (await h.admin("GET", "/pages/calibrated/report")).body;
      const search = report.segments.find((s: any) => s.segment === "source=search");
      const social = report.segments.find((s: any) => s.segment === "source=social");
      const hand = handCalibration(scored.filter((s) => s.segment === "source=search"));
      expect(hand.picks).toBe(330);
      expect(hand.bins.length).toBeGreaterThanOrEqual(2); // 3 bands, fewer when a tie spans one
      expect(new Set(scored.map((x) => x.p)).size).toBeLessThan(scored.length); // ties are there to be kept together
      expectSame(search.calibration, hand);
      expectSame(report.pooled.calibration, handCalibration(scored));
      // 30 social picks: too little data, said instead of drawn.
      expect(social.calibration).toMatchObject({ picks: 30, enough: false, bins: [], logLoss: null, needs: { picks: 200, conversions: 10 } });
    });
  });
});
