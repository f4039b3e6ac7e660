/**
 * The fold loop on every database target: every pick folds as a trial (n) in the first fold after
 * it is served and its conversion (k) in the first fold after it is reported inside the attribution
 * window (src/store/repositories/folds.ts), one folder at a time, no trial or conversion folded
 * twice across a restart, and the stored posterior equal to a replay of the engine's foldCycle
 * over the stored picks.
 */
import { describe, expect, it } from "vitest";
import { setTimeout as sleep } from "node:timers/promises";
import { forEachDatabase } from "../support/databases.ts";
import { startHarness, useHarness, testPage, type Harness } from "./harness.ts";
import { FoldLoop, foldSeed, type FoldContext } from "../../src/service/folds.ts";
import type { FoldCycleInput, FoldCycleOutput } from "../../src/model/index.ts";
import { foldLogs, foldedRows, loadAllocations, loadSnapshot } from "../../src/store/repositories/folds.ts";
import { deserializeState, foldCycle, initialState, parseSettings, sitesOf } from "../../src/model/index.ts";
import { designOf } from "../../src/service/definition.ts";
import { loadPage } from "../../src/store/repositories/pages.ts";
import type { Database } from "../../src/store/database.ts";

type PageRef = { key: string; publicKey: string; id: number };

async function createPage(h: Harness, key: string, settings: Record<string, unknown>): Promise<PageRef> {
  const r = await h.admin("POST", "/pages", testPage(key, { settings }));
  expect(r.status).toBe(201);
  const id = (await h.db.pool.query("SELECT id FROM page WHERE key = $1", [key])).rows[0].id as number;
  return { key, publicKey: r.body.publicKey, id };
}

/** Picks whose trial or conversion the next fold will count. */
const unfolded = async (db: Database, pageId: number) =>
  (await db.pool.query(
    `SELECT count(*)::int AS n FROM pick WHERE page_id = $1
       AND (state = 'open' OR (state = 'folded' AND converted_at IS NOT NULL AND conversion_folded_version IS NULL))`, [pageId])).rows[0].n as number;

/** foldedRows summed per fold version (the picks of a page show several combinations). */
const perVersion = async (db: Database, pageId: number) => {
  const totals = new Map<number, { version: number; n: number; k: number }>();
  for (const { version, n, k } of await foldedRows(db.pool, pageId)) {
    const t = totals.get(version) ?? { version, n: 0, k: 0 };
    totals.set(version, { version, n: t.n + n, k: t.k + k });
  }
  return [...totals.values()];
};

const states = async (db: Database, pageId: number) =>
  (await db.pool.query("SELECT state, count(*)::int AS n FROM pick WHERE page_id = $1 GROUP BY 1 ORDER BY 1", [pageId])).rows
    .reduce((acc: Record<string, number>, r: { state: string; n: number }) => ({ ...acc, [r.state]: r.n }), {});

/** Runs `action` while `loop` computes its folds with `compute` (given the engine) in place of the engine. */
async function withCompute<T>(loop: FoldLoop, compute: (input: FoldCycleInput, engine: FoldContext["compute"]) => Promise<FoldCycleOutput>, action: () => Promise<T>): Promise<T> {
  const context = loop.context as { compute: FoldContext["compute"] };
  const engine = context.compute;
  context.compute = (input) => compute(input, engine);
  try {
    return await action();
  } finally {
    context.compute = engine;
  }
}

forEachDatabase("fold loop", (open, target) => {
  describe("maturing and the attribution window", () => {
    const h = useHarness(open);

    it("counts a conversion inside the window, stores but does not count one after it", async () => {
      // a 2-second window, in real time
      const page = await createPage(h, "window-page", { attributionWindowHours: 2 / 3600 });
      const early = (await h.pick(page, "early", { source: "search" })).body.pick;
      const late = (await h.pick(page, "late", { source: "search" })).body.pick;
      await sleep(300);
      const inside = await h.outcome(page, { pick: early, event: "e-early" });
      expect(inside.body).toEqual({ accepted: true, duplicate: false, counted: true });
      await sleep(2200);
      const after = await h.outcome(page, { pick: late, event: "e-late" });
      expect(after.status).toBe(202);
      expect(after.body.counted).toBe(false);
      expect(after.body.reason).toMatch(/after the attribution window closed/);
      expect(await h.count("outcome")).toBe(2); // the late one is stored
      const fold = await h.server.services.folds.foldPage(page.id, true);
      expect(fold).toMatchObject({ folded: true, picks: 2 });
      const report = (await h.admin("GET", `/pages/${page.key}/report`)).body;
      expect(report.pooled).toMatchObject({ visitors: 2, conversions: 1, folded: 2 });
    });

    it("folds trials at once, a later conversion inside the window as k in a later fold, one after the window never", async () => {
      const page = await createPage(h, "mature-page", { attributionWindowHours: 1 });
      const picks = [];
      for (const v of ["a", "b", "c"]) picks.push((await h.pick(page, v, { source: "social" })).body.pick);
      await h.outcome(page, { pick: picks[0], event: "conv-a" });
      const first = await h.server.services.folds.foldPage(page.id, true);
      // every trial folds at once; a's conversion, reported before the fold, lands in the same fold
      expect(first).toMatchObject({ folded: true, picks: 3 });
      expect(await states(h.db, page.id)).toEqual({ folded: 3 });
      const v1 = first.folded ? first.version : 0;
      expect(await perVersion(h.db, page.id)).toEqual([{ version: v1, n: 3, k: 1 }]);

      // b converts after its trial was folded, still inside its window: counted, and pending until the next fold
      expect((await h.outcome(page, { pick: picks[1], event: "conv-b" })).body).toEqual({ accepted: true, duplicate: false, counted: true });
      expect((await h.admin("GET", `/pages/${page.key}/report`)).body.totals).toMatchObject({ visitors: 3, conversions: 2, pending: 1 });
      // c's window closes before it converts: stored, never counted
      await h.db.pool.query("UPDATE pick SET window_ends_at = now() - interval '1 second' WHERE id = $1", [picks[2]]);
      expect((await h.outcome(page, { pick: picks[2], event: "conv-c" })).body.counted).toBe(false);
      const second = await h.server.services.folds.foldPage(page.id, true);
      expect(second).toMatchObject({ folded: true, picks: 0 });
      const v2 = second.folded ? second.version : 0;
      expect(await perVersion(h.db, page.id)).toEqual([{ version: v1, n: 3, k: 1 }, { version: v2, n: 0, k: 1 }]);
      expect((await h.admin("GET", `/pages/${page.key}/report`)).body.totals).toMatchObject({ visitors: 3, conversions: 2, pending: 0 });

      // nothing is folded again: a second conversion event of b is not counted, and the model's tallies stay put
      expect((await h.outcome(page, { pick: picks[1], event: "conv-b-again" })).body.counted).toBe(false);
      const again = await h.server.services.folds.foldPage(page.id, true);
      expect(again).toMatchObject({ folded: true, picks: 0 });
      expect((await foldedRows(h.db.pool, page.id)).reduce((sum, r) => sum + r.k, 0)).toBe(2);
      const snapshot = (await loadSnapshot(h.db.pool, page.id, again.folded ? again.version : 0))!;
      const sites = [...sitesOf(deserializeState(snapshot.state, designOf((await loadPage(h.db.pool, page.key))!))).values()];
      expect({ visitors: sites.reduce((t, x) => t + x.visitors, 0), conversions: sites.reduce((t, x) => t + x.conversions, 0) }).toEqual({ visitors: 3, conversions: 2 });
    });

    it("serves segments beyond maxSegments from the pooled model and still learns from them", async () => {
      const page = await createPage(h, "overflow-page", { maxSegments: 1 });
      const first = await h.pick(page, "o1", { source: "search" });
      const beyond = await h.pick(page, "o2", { source: "social" });
      expect(first.body.segment).toBe("source=search");
      expect(beyond.body.segment).toBe("*");
      await h.outcome(page, { pick: beyond.body.pick, event: "o2-conv" });
      const fold = await h.server.services.folds.foldPage(page.id, true);
      expect(fold).toMatchObject({ folded: true, picks: 2 });
      const report = (await h.admin("GET", `/pages/${page.key}/report`)).body;
      expect(report.segments.map((s: { segment: string }) => s.segment)).toEqual(["source=search"]);
      expect(report.pooled).toMatchObject({ visitors: 2, conversions: 1, folded: 2 });
      const snapshot = (await loadSnapshot(h.db.pool, page.id, fold.folded ? fold.version : 0))!;
      const overflow = sitesOf(deserializeState(snapshot.state, designOf((await loadPage(h.db.pool, page.key))!))).get("*")!;
      expect({ visitors: overflow.visitors, conversions: overflow.conversions }).toEqual({ visitors: 1, conversions: 1 });
    });

    it("keeps serving picks while a fold computes", async () => {
      const page = await createPage(h, "busy-page", {});
      await h.pick(page, "b0", { source: "search" });
      const loop = h.server.services.folds;
      let during: { status: number; sticky: boolean } | null = null;
      // a pick made from inside the computation would wait forever if the fold held the database
      const folded = await withCompute(loop, async (input, engine) => {
        const r = await h.pick(page, "b1", { source: "search" });
        during = { status: r.status, sticky: r.body.sticky };
        return engine(input);
      }, () => loop.foldPage(page.id, true));
      expect(folded).toMatchObject({ folded: true, picks: 1 });
      expect(during).toEqual({ status: 200, sticky: false });
    });

    it("discards a fold when a conversion landed or the page changed while it computed, and folds them next pass", async () => {
      const page = await createPage(h, "raced-page", {});
      for (const v of ["r0", "r1"]) await h.pick(page, v, { source: "search" });
      const loop = h.server.services.folds;
      const raceWith = async (sideEffect: () => Promise<unknown>) => {
        let once = true;
        // (the edit folds too, through the same context: only the loop's fold runs the side effect)
        return withCompute(loop, async (input, engine) => {
          if (once) {
            once = false;
            await sideEffect();
          }
          return engine(input);
        }, () => loop.foldPage(page.id, true));
      };
      // a conversion stamped before the fold's read time commits only after the read (an outcome
      // whose transaction began before the read and ended after it)
      const raced = await raceWith(() => h.db.pool.query("UPDATE pick SET converted_at = now() - interval '1 hour' WHERE page_id = $1 AND visitor = 'r1'", [page.id]));
      expect(raced).toMatchObject({ folded: false, reason: "raced" });
      expect(await states(h.db, page.id)).toEqual({ open: 2 });
      if (target.kind === "embedded") {
        // (on PostgreSQL an edit waits for the fold's session lock, so it cannot land mid-fold)
        const edited = await raceWith(() => h.admin("PATCH", `/pages/${page.key}`, { settings: { explorationFloor: 0.05 } }));
        expect(edited).toMatchObject({ folded: false, reason: "raced" });
      }
      // refit waits for any fold of the page still running (the edit's own, which it answered without)
      const refolded = await loop.refit(page.id);
      const version = (await h.db.pool.query("SELECT model_version FROM page WHERE id = $1", [page.id])).rows[0].model_version;
      expect(refolded).toMatchObject({ folded: true, version });
      expect(await states(h.db, page.id)).toEqual({ folded: 2 });
      // (the edit's own fold may have taken them first) — either way each trial and conversion was folded once
      expect((await foldLogs(h.db.pool, page.id)).reduce((sum, l) => sum + l.picks, 0)).toBe(2);
      expect((await foldedRows(h.db.pool, page.id)).reduce((sum, r) => sum + r.k, 0)).toBe(1);
    });

    it("lets one folder fold a due page at a time", async () => {
      const page = await createPage(h, "one-folder", { foldIntervalSeconds: 1 });
      for (const v of ["p", "q", "r"]) await h.pick(page, v, { source: "search" });
      await sleep(1100);
      // a second server process on the same database: its own pool on PostgreSQL
      const other = target.kind === "postgres" ? await reopen(h.db) : null;
      const loops = [h.server.services.folds, new FoldLoop((other ?? h.db).pool, false)];
      const results = await Promise.all(loops.map((l) => l.foldPage(page.id)));
      await other?.close();
      expect(results.filter((r) => r.folded)).toHaveLength(1);
      expect(results.find((r) => r.folded)).toMatchObject({ picks: 3 });
      expect((await h.db.pool.query("SELECT model_version FROM page WHERE id = $1", [page.id])).rows[0].model_version).toBe(2);
    });
  });

  describe("page edits", () => {
    const h = useHarness(open);
    const loop = () => h.server.services.folds;
    const versionOf = async (pageId: number) => (await h.db.pool.query("SELECT model_version FROM page WHERE id = $1", [pageId])).rows[0].model_version as number;

    it("answers an edit whose fold outlasts EDIT_FOLD_WAIT_MS at once, serves the baseline meanwhile, and finishes the fold in the background", async () => {
      const page = await createPage(h, "slow-edit", {});
      for (const v of ["s0", "s1", "s2"]) await h.pick(page, v, { source: "search" });
      let release!: () => void;
      const held = new Promise<void>((resolve) => { release = resolve; });
      try {
        const answer = await withCompute(loop(), async (input, engine) => {
          await held;
          return engine(input);
        }, () => h.admin("PATCH", `/pages/${page.key}`, { addLevels: [{ factor: "button", name: "chat", value: "Chat with us" }] }));
        expect(answer.status).toBe(200);
        expect(answer.body.learned).toMatchObject({ action: "remapped", foldPending: true });
        expect(answer.body.learned.message).toMatch(/still being refitted .* visitors see the baseline/);
        // the edit is committed (a new version with the remapped model and no allocations yet)
        expect(await loadAllocations(h.db.pool, page.id, await versionOf(page.id))).toEqual(new Map());
        const served = await h.pick(page, "meanwhile", { source: "search" });
        expect(served.body).toMatchObject({ key: "title=short|photo=shop|button=book", propensity: 1 });
      } finally {
        release();
      }
      const pending = await versionOf(page.id);
      await waitUntil(async () => (await versionOf(page.id)) === pending + 1, 10_000);
      expect((await loadAllocations(h.db.pool, page.id, pending + 1)).size).toBeGreaterThan(0);
      // the new level is served once the fold is in
      expect(JSON.stringify([...(await loadAllocations(h.db.pool, page.id, pending + 1)).values()])).toContain("button=chat");
      // the pick served meanwhile came after the fold read the page: it waits for the next fold
      expect(await states(h.db, page.id)).toEqual({ folded: 3, open: 1 });
    });

    it("lets a stopping loop finish the fold it runs but start no refit that was still waiting", async () => {
      const page = await createPage(h, "stopping", {});
      const own = new FoldLoop(h.db.pool, false);
      let release!: () => void;
      const held = new Promise<void>((resolve) => { release = resolve; });
      const [running, waiting] = await withCompute(own, async (input, engine) => {
        await held;
        return engine(input);
      }, async () => {
        const results = [own.foldPage(page.id, true), own.refit(page.id)];
        const stopped = own.stop();
        release();
        await stopped;
        return Promise.all(results);
      });
      expect(running).toMatchObject({ folded: true });
      expect(waiting).toEqual({ folded: false, page: null, reason: "stopped" });
    });

    it("leaves a page whose edit fold failed to the fold loop's next pass, which folds it with nothing new", async () => {
      const page = await createPage(h, "failed-edit", {});
      const before = await versionOf(page.id);
      const answer = await withCompute(loop(), async () => {
        throw new Error("the fold thread exited (code 1)");
      }, () => h.admin("PATCH", `/pages/${page.key}`, { settings: { explorationFloor: 0.2 } }));
      expect(answer.status).toBe(200);
      expect(answer.body.learned).toMatchObject({ foldPending: true });
      expect(answer.body.learned.message).toMatch(/visitors see the previous allocations/);
      expect(await versionOf(page.id)).toBe(before);
      const results = await loop().tick();
      expect(results.find((r) => r.folded && r.page === page.key)).toMatchObject({ folded: true, version: before + 1, picks: 0 });
      const allocation = [...(await loadAllocations(h.db.pool, page.id, before + 1)).values()][0] as { propensities: number[] };
      // with a 0.2 floor each of the 10 allowed combinations gets at least (1 − b)·0.2/10, b = 0.01 (allocation.ts)
      expect(Math.min(...allocation.propensities)).toBeGreaterThanOrEqual(0.99 * 0.2 / 10 - 1e-12);
    });
  });

  /**
   * Two server processes on one PostgreSQL: A folds, B polls only once a minute, so B can see the
   * new version within 5 s only through LISTEN/NOTIFY. `meanwhile` runs between B's first read and
   * A's fold.
   */
  async function heardByOtherProcess(pageKey: string, meanwhile: (db: Database) => Promise<void> = async () => {}): Promise<void> {
    const db = await open();
    const a = await startHarness(db);
    const other = await reopen(db);
    const b = await startHarness(other, { pollMs: 60_000 });
    try {
      const page = await createPage(a, pageKey, {});
      expect((await b.server.services.serving.get(page.key)).version).toBe(1);
      await meanwhile(db);
      const fold = await a.server.services.folds.foldPage(page.id, true);
      expect(fold).toMatchObject({ folded: true, version: 2 });
      await waitUntil(async () => (await b.server.services.serving.get(page.key)).version === 2, 5000);
    } finally {
      await b.close();
      await other.close();
      await a.close();
      await db.close();
    }
  }

  it.runIf(target.kind === "postgres")("tells another server process of a new model version through LISTEN/NOTIFY", async () => {
    await heardByOtherProcess("notified");
  });

  it.runIf(target.kind === "postgres")("listens again after its LISTEN connection is cut, and hears the next fold", async () => {
    await heardByOtherProcess("relistened", async (db) => {
      const listening = "FROM pg_stat_activity WHERE datname = current_database() AND query LIKE 'LISTEN %'";
      const listeners = async () => (await db.pool.query(`SELECT pid ${listening}`)).rows.map((r) => r.pid as number);
      const before = await listeners();
      expect(before.length).toBeGreaterThan(0);
      // as a database restart or an administrator would: end every listening backend
      await db.pool.query(`SELECT pg_terminate_backend(pid) ${listening}`);
      await waitUntil(async () => {
        const now = await listeners();
        return now.length === before.length && now.every((pid) => !before.includes(pid));
      }, 10_000);
    });
  });

  it("resumes after a restart without folding any trial or conversion twice, and the stored posterior equals a replay of the stored picks", async () => {
    const storage = await target.storage();
    try {
      let db = await storage.open();
      let h = await startHarness(db, { foldLoop: true, foldTickMs: 100 });
      const page = await createPage(h, "restart-page", { foldIntervalSeconds: 0.3, attributionWindowHours: 0.5 / 3600 });
      const sources = ["search", "social", "newsletter"];
      const serve = async (from: number, to: number) => {
        for (let i = from; i < to; i++) {
          const pick = (await h.pick(page, `visitor-${i}`, { source: sources[i % 3] })).body;
          // invented traffic for the mechanics only: every third visitor converts
          if (i % 3 === 0) await h.outcome(page, { pick: pick.pick, event: `conv-${i}` });
        }
      };
      await serve(0, 60);
      await waitUntil(async () => (await unfolded(db, page.id)) === 0);
      await h.close();
      await db.close();

      db = await storage.open();
      h = await startHarness(db, { foldLoop: true, foldTickMs: 100 });
      await serve(60, 90);
      await waitUntil(async () => (await unfolded(db, page.id)) === 0);
      await h.close(); // stops the loop: the state below is final

      const folded = await foldedRows(db.pool, page.id);
      const logs = await foldLogs(db.pool, page.id);
      const pickTotal = (await db.pool.query("SELECT count(*)::int AS n, count(converted_at)::int AS k FROM pick WHERE page_id = $1", [page.id])).rows[0];
      expect(pickTotal.n).toBe(90);
      expect(folded.reduce((s, r) => s + r.n, 0)).toBe(90);
      expect(folded.reduce((s, r) => s + r.k, 0)).toBe(pickTotal.k);
      // every fold logged the picks it consumed; their sum is each pick exactly once
      expect(logs.reduce((s, l) => s + l.picks, 0)).toBe(90);
      expect(new Set(logs.map((l) => l.version)).size).toBe(logs.length);

      const stored = (await loadPage(db.pool, page.key))!;
      const snapshot = (await loadSnapshot(db.pool, page.id, stored.modelVersion))!;
      const state = deserializeState(snapshot.state, designOf(stored));
      const siteVisitors = [...sitesOf(state).values()].reduce((s, site) => s + site.visitors, 0);
      const siteConversions = [...sitesOf(state).values()].reduce((s, site) => s + site.conversions, 0);
      expect(siteVisitors).toBe(90);
      expect(siteConversions).toBe(pickTotal.k);

      // Replay: the same engine calls, in version order, over the rows rebuilt from the stored picks.
      const design = designOf(stored);
      const settings = parseSettings(stored.settings);
      let replay = initialState(design, settings);
      let retired: ReturnType<typeof foldCycle>["retired"] = [];
      for (const log of logs) {
        const rows = folded.filter((r) => r.version === log.version).map(({ segment, combination, n, k }) => ({ segment, combination, n, k }));
        const out = foldCycle({ design, settings, state: replay, rows, now: log.at.getTime(), segments: sources.map((s) => `source=${s}`), retired, seed: foldSeed(page.id, log.version) });
        replay = out.state;
        retired = out.retired;
      }
      expect([...replay.segments.keys()].sort()).toEqual([...state.segments.keys()].sort());
      for (const [segment, data] of state.segments) {
        const other = replay.segments.get(segment)!;
        expect(other.counts.keys).toEqual(data.counts.keys);
        data.counts.n.forEach((v, i) => expect(other.counts.n[i]).toBeCloseTo(v, 9));
        data.counts.k.forEach((v, i) => expect(other.counts.k[i]).toBeCloseTo(v, 9));
        data.mode.forEach((v, i) => expect(other.mode[i]).toBeCloseTo(v, 9));
      }
      await db.close();
    } finally {
      await storage.remove();
    }
  });
});

async function reopen(db: Database): Promise<Database> {
  const { openDatabase } = await import("../../src/store/database.ts");
  return openDatabase({ url: db.url, migrate: false });
}

async function waitUntil(check: () => Promise<boolean>, timeoutMs = 20_000): Promise<void> {
  const end = Date.now() + timeoutMs;
  while (Date.now() < end) {
    if (await check()) return;
    await sleep(100);
  }
  throw new Error("condition not reached in time");
}
