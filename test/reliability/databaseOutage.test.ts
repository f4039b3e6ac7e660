/**
 * The database stops and starts again under load (issue 11): 16 concurrent visitors pick and
 * convert in a loop while the page is folded every 0.5 s, and a proxy between the server's pool
 * and the database (test/support/databaseProxy.ts) cuts every connection and refuses new ones for
 * a while — 3 s in CI, 12 s with FACETWISE_RELIABILITY_SCALE=nightly — then lets them through;
 * then it cuts them again briefly (150 ms) 10 times, 40 at nightly size, a few tenths of a second
 * apart, so that some cuts fall between a write's commit and its answer.
 *
 * Expected, per RFC 9110: while the database is away every answer is 2xx or 503 Service
 * Unavailable (§15.6.4) with a Retry-After of a positive number of seconds (§10.2.3) and the
 * catalogue's DATABASE_UNAVAILABLE or DATABASE_BUSY — never a 500 or another 5xx; the server stays
 * up and serves again once the database is back. Visitors retry a 503 as a client should: a pick
 * with the same visitor (the sticky rule hands back a pick the lost answer had stored), an outcome
 * with the same event id (idempotent). So after the outage every visitor has exactly one stored
 * pick, the one acknowledged; every conversion is stored exactly once; and after the next fold
 * n = stored picks and k = converted picks. A 503'd write may have been stored (the commit
 * reached the database, its answer did not): the retry then reports it sticky or duplicate.
 *
 * Printed: time from the outage to the first 503, from the database's return to the first 2xx,
 * the status counts, the acknowledged writes and how many of them were stored before their 503.
 */
import { expect, it, vi } from "vitest";
import { forEachDatabase } from "../support/databases.ts";
import { throughProxy } from "../support/databaseProxy.ts";
import { startHarness, testPage, type Reply } from "../integration/harness.ts";
import { foldedRows } from "../../src/store/repositories/folds.ts";
import { asServiceError } from "../../src/service/errors.ts";
import { size } from "./scale.ts";

const VISITORS = 16;
/** longer than any pool or transaction timeout in src/store/database.ts (15 s at most) */
const ANSWER_WITHIN_MS = 20_000;
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

forEachDatabase("database stopped under load", (_open, target) => {
  it("answers 2xx or 503 + Retry-After, recovers, and keeps every acknowledged write exactly once", { timeout: 300_000 }, async () => {
    const outageMs = size(3_000, 12_000);
    const cuts = size(10, 40);
    const { db, proxy, close } = await throughProxy(target);
    const h = await startHarness(db);
    const errors: string[] = [];
    const spy = vi.spyOn(console, "error").mockImplementation((...args: unknown[]) => void errors.push(args.map(String).join(" ")));
    const warn = vi.spyOn(console, "warn").mockImplementation(() => undefined);
    try {
      const created = await h.admin("POST", "/pages", testPage("outage"));
      expect(created.status).toBe(201);
      const page = { key: "outage", publicKey: created.body.publicKey as string };
      const pageId = (await h.db.pool.query("SELECT id FROM page WHERE key = 'outage'")).rows[0].id as number;

      // every answer, when it arrived, and anything that is not 2xx or a proper 503
      const answers: { at: number; status: number }[] = [];
      const wrong: string[] = [];
      const seen = (what: string, r: Reply) => {
        answers.push({ at: performance.now(), status: r.status });
        if (r.status < 300) return;
        const retryAfter = Number(r.headers.get("retry-after"));
        const code = r.body?.error?.code;
        if (r.status !== 503 || !(retryAfter > 0) || !["DATABASE_UNAVAILABLE", "DATABASE_BUSY"].includes(code)) {
          wrong.push(`${what}: ${r.status} retry-after=${r.headers.get("retry-after")} ${r.text.slice(0, 200)}`);
        }
      };
      /** Sends until a 2xx (retrying 503s every 100 ms, faster than Retry-After so recovery is measured); gives up at `deadline`. */
      const untilAccepted = async (what: string, send: () => Promise<Reply>, deadline: number): Promise<Reply | null> => {
        while (performance.now() < deadline) {
          // a request the server never answers (a stuck pool) fails the test instead of hanging it
          const r = await Promise.race([send(), sleep(ANSWER_WITHIN_MS).then(() => null)]);
          if (!r) {
            wrong.push(`${what}: no answer within ${ANSWER_WITHIN_MS} ms`);
            return null;
          }
          seen(what, r);
          if (r.status < 300) return r;
          if (r.status !== 503) return null;
          await sleep(100);
        }
        return null;
      };

      let folds = 0;
      let failedFolds = 0;
      const foldErrors = new Set<string>();
      let running = true;
      const folding = (async () => {
        while (running) {
          const result = await h.server.services.folds.foldPage(pageId, true).catch((error: unknown) => {
            failedFolds += 1;
            foldErrors.add(asServiceError(error).code);
            return null;
          });
          if (result?.folded) folds += 1;
          await sleep(500);
        }
      })();

      const acknowledged = new Map<string, string>(); // visitor → pick
      const converted = new Map<string, string>(); // pick → event
      const gaveUp: string[] = [];
      let sticky = 0;
      let duplicates = 0;
      let next = 0;
      let stopping = false;
      const giveUpAt = () => performance.now() + outageMs + 30_000;
      const visitor = async () => {
        while (!stopping) {
          const id = `v${next++}`;
          const deadline = giveUpAt();
          const picked = await untilAccepted("pick", () => h.pick(page, id, { source: `s${next % 4}` }), deadline);
          if (!picked) { gaveUp.push(id); continue; }
          acknowledged.set(id, picked.body.pick);
          if (picked.body.sticky) sticky += 1;
          const event = `e-${id}`;
          const outcome = await untilAccepted("outcome", () => h.outcome(page, { pick: picked.body.pick, event }), deadline);
          if (!outcome) { gaveUp.push(id); continue; }
          if (outcome.body.counted || outcome.body.duplicate) converted.set(picked.body.pick, event);
          if (outcome.body.duplicate) duplicates += 1;
        }
      };
      const load = Promise.all(Array.from({ length: VISITORS }, visitor));

      await sleep(2_000);
      const down = performance.now();
      await proxy.stop();
      const readyDuring = await h.call("GET", "/readyz");
      const healthDuring = await h.call("GET", "/healthz");
      await sleep(outageMs);
      await proxy.start();
      const back = performance.now();
      const cutByOutage = proxy.cut;
      await sleep(3_000);
      // then brief cuts: some land between a write's commit and its answer, whose retry must
      // find the write stored (sticky pick, duplicate event) rather than store it again
      for (let i = 0; i < cuts; i++) {
        await proxy.stop();
        await sleep(150);
        await proxy.start();
        await sleep(250 + Math.random() * 300);
      }
      await sleep(1_000);
      stopping = true;
      await load;
      running = false;
      await folding;
      const readyAfter = await h.call("GET", "/readyz");

      const firstUnavailable = answers.find((a) => a.at >= down && a.status === 503);
      const firstAfter = answers.find((a) => a.at >= back && a.status < 300);
      // the last 503 before the brief cuts began: from then on every visitor was served again
      const lastUnavailable = answers.filter((a) => a.at >= back && a.at < back + 3_000 && a.status === 503).at(-1);
      const statuses: Record<number, number> = {};
      for (const a of answers) statuses[a.status] = (statuses[a.status] ?? 0) + 1;
      const final = await h.server.services.folds.foldPage(pageId, true);

      const stored = await h.db.pool.query<{ visitor: string; picks: string[]; outcomes: number; events: string[] | null; converted: boolean }>(
        `SELECT p.visitor, array_agg(DISTINCT p.id::text) AS picks, count(o.id)::int AS outcomes,
                array_agg(o.event) FILTER (WHERE o.id IS NOT NULL) AS events, bool_or(p.converted_at IS NOT NULL) AS converted
         FROM pick p LEFT JOIN outcome o ON o.pick_id = p.id WHERE p.page_id = $1 GROUP BY p.visitor`, [pageId]);
      const byVisitor = new Map(stored.rows.map((r) => [r.visitor, r]));
      const folded = await foldedRows(h.db.pool, pageId);
      const n = folded.reduce((sum, r) => sum + r.n, 0);
      const k = folded.reduce((sum, r) => sum + r.k, 0);
      const storedPicks = stored.rows.reduce((sum, r) => sum + r.picks.length, 0);
      const storedConverted = stored.rows.filter((r) => r.converted).length;
      // the pick and its assignment are one statement (repositories/picks.ts): never one without the other
      const unassigned = (await h.db.pool.query<{ n: number }>(
        "SELECT count(*)::int AS n FROM pick p WHERE p.page_id = $1 AND NOT EXISTS (SELECT 1 FROM assignment a WHERE a.pick_id = p.id)", [pageId])).rows[0].n;

      console.log(`database outage on ${target.label}: ${outageMs / 1000} s outage cut ${cutByOutage} connections, then ${cuts} brief cuts ${proxy.cut - cutByOutage}; ` +
        `first 503 ${firstUnavailable ? Math.round(firstUnavailable.at - down) : "never"} ms after the stop, ` +
        `first 2xx ${firstAfter ? Math.round(firstAfter.at - back) : "never"} ms after the database returned, ` +
        `${lastUnavailable ? `last 503 ${Math.round(lastUnavailable.at - back)} ms after it` : "no 503 after it"}; ` +
        `statuses ${JSON.stringify(statuses)}; ${acknowledged.size} picks and ${converted.size} conversions acknowledged ` +
        `(${sticky} picks and ${duplicates} conversions answered sticky/duplicate on retry: stored before their 503); ` +
        `${folds} folds, ${failedFolds} failed while the database was away; after the next fold n = ${n} of ${storedPicks} stored picks, k = ${k} of ${storedConverted} converted; ` +
        `/readyz ${readyDuring.status} during, ${readyAfter.status} after`);

      const distinct = [...new Set(errors.map((e) => e.replace(/\([0-9a-f]{8}\)/, "")))];
      if (distinct.length > 0) console.log(`errors logged by the server: ${distinct.slice(0, 10).join("\n")}`);
      // RFC 9110 §15.6.4 (503) and §10.2.3 (Retry-After): the only 5xx allowed
      expect(wrong).toEqual([]);
      expect(errors.filter((e) => /Internal error|INTERNAL/.test(e))).toEqual([]);
      expect(gaveUp).toEqual([]);
      expect(firstUnavailable).toBeDefined();
      expect(firstAfter).toBeDefined();
      expect(healthDuring.status).toBe(200);
      expect(readyDuring.status).toBe(503);
      expect(readyAfter.status).toBe(200);
      expect(final.folded).toBe(true);
      expect([...foldErrors].filter((code) => code !== "DATABASE_UNAVAILABLE" && code !== "DATABASE_BUSY")).toEqual([]);
      // exactly once: one stored pick per visitor, the acknowledged one; one outcome per conversion
      const badPicks = [...acknowledged].filter(([id, pick]) => byVisitor.get(id)?.picks.length !== 1 || byVisitor.get(id)?.picks[0] !== pick);
      const badConversions = [...acknowledged].filter(([id, pick]) => {
        const row = byVisitor.get(id)!;
        return converted.has(pick) && (!row.converted || row.outcomes !== 1 || row.events?.[0] !== converted.get(pick));
      });
      expect(badPicks).toEqual([]);
      expect(badConversions).toEqual([]);
      expect(stored.rows.length).toBe(acknowledged.size);
      expect(unassigned).toBe(0);
      expect(converted.size).toBe(acknowledged.size);
      expect(n).toBe(storedPicks);
      expect(k).toBe(storedConverted);
    } finally {
      spy.mockRestore();
      warn.mockRestore();
      await h.close();
      await close();
    }
  });
});
