/**
 * The simulator's facetwise policy and the server's fold loop must learn the same posterior from
 * the same data: picks are served and converted through the real services on the embedded
 * database, the server folds them (FoldLoop.foldPage → foldInTransaction → foldCycle), and the
 * same (segment, combination, converted) records are fed to facetwisePolicy. The stored snapshot
 * and the policy's state must hold the same Gaussian sites. (Reference: the server's own fold is
 * the thing the simulator claims to reproduce — issue 4, "Tests".)
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { buildDesign, createRng, deserializeState, parseSettings, serializeState, allowedCombinations, combinationKey } from "../../src/model/index.ts";
import { createServices, type Services } from "../../src/service/index.ts";
import { facetwisePolicy } from "../../src/sim/facetwisePolicy.ts";
import { loadSnapshot } from "../../src/store/repositories/folds.ts";
import type { Database } from "../../src/store/database.ts";
import { databaseTargets } from "../support/databases.ts";

const factors = [
  { name: "headline", levels: [{ name: "plain" }, { name: "question" }, { name: "proof" }] },
  { name: "hero", levels: [{ name: "photo" }, { name: "video" }] },
  { name: "cta", levels: [{ name: "start" }, { name: "try" }] },
];
const exclude = [{ hero: "video", cta: "try" }];
// A very short attribution window so non-converting picks mature within the test.
const settings = { attributionWindowHours: 0.0002 };

describe("facetwise policy vs the server's fold", () => {
  let db: Database;
  let services: Services;
  beforeAll(async () => {
    db = await databaseTargets()[0]!.open();
    services = await createServices(db, { foldLoop: false, pollMs: 50 });
  }, 120_000);
  afterAll(async () => {
    await services?.close();
    await db?.close();
  });

  it("stores the same posterior sites as the policy computes from the same records", async () => {
    const page = await services.pages.create({ key: "parity", name: "Parity", factors, exclude, segmentBy: ["source"], settings });
    const rng = createRng(2024);
    const records: { segment: string; key: string; converted: boolean }[] = [];
    for (let i = 0; i < 160; i++) {
      const source = i % 3 === 0 ? "mail" : "search";
      const reply = await services.picks.pick("parity", page.publicKey, { visitor: `visitor-${i}`, context: { source } });
      const converted = rng.next() < (reply.key.includes("question") ? 0.35 : 0.2);
      if (converted) await services.outcomes.record("parity", page.publicKey, { pick: reply.pick });
      records.push({ segment: reply.segment, key: reply.key, converted });
    }
    await new Promise((resolve) => setTimeout(resolve, 1500)); // let every window close
    const { rows } = await db.pool.query<{ id: number }>("SELECT id FROM page WHERE key = 'parity'");
    const folded = await services.folds.foldPage(rows[0]!.id, true);
    expect(folded.folded).toBe(true);
    if (!folded.folded) return;
    expect(folded.picks).toBe(160);
    const snapshot = await loadSnapshot(db.pool, rows[0]!.id, folded.version);
    const design = buildDesign({ factors, exclude });
    const server = serializeState(deserializeState(snapshot!.state, design));

    const keys = allowedCombinations(design).map((c) => combinationKey(design, c));
    const segmentNames = [...new Set(records.map((r) => r.segment))];
    const policy = facetwisePolicy({ design, settings: parseSettings(settings), segmentNames, keys, msPerVisitor: 1, rng: createRng(1) });
    for (const r of records) policy.observe(segmentNames.indexOf(r.segment), keys.indexOf(r.key), r.converted);
    policy.fold(160);
    const sim = serializeState(policy.state());

    const bySegment = (s: typeof sim) => [...s.segments].sort((a, b) => a.segment.localeCompare(b.segment));
    expect(bySegment(sim).map((s) => s.segment)).toEqual(bySegment(server).map((s) => s.segment));
    bySegment(sim).forEach((segment, i) => {
      const other = bySegment(server)[i]!;
      const counts = (x: typeof segment) => Object.fromEntries(x.combinations.map((key, r) => [key, [x.n[r], x.k[r]]]));
      expect(counts(segment)).toEqual(counts(other));
      segment.mode.forEach((x, j) => expect(x).toBeCloseTo(other.mode[j]!, 9));
    });
    expect(sim.segments.reduce((a, s) => a + s.k.reduce((t, k) => t + k, 0), 0)).toBe(records.filter((r) => r.converted).length);
  }, 120_000);
});
