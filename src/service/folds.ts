/**
 * The fold loop. Per page, every foldIntervalSeconds: take the new trials (picks served since the
 * last fold, n) and the new conversions (reported since the last fold, inside their attribution
 * window, k), aggregate them, run the engine's foldCycle — the only place the model's maths runs,
 * on a worker thread so picks keep flowing — and store the new snapshot, allocations, retired list
 * and model version in the same transaction that marks those trials and conversions folded. A
 * crash before COMMIT leaves them for the next fold; after, they are folded: no trial or
 * conversion is folded twice or lost.
 *
 * The loop reads and computes outside any transaction, then commits under the page's advisory
 * transaction lock after checking that nothing moved: the model version is the one it read and
 * the picks it marks are exactly the picks it folded (else it discards the result and the next
 * pass folds again). On PostgreSQL it also holds a session advisory lock while computing, so other
 * processes skip the page rather than compute the same fold. Page creation folds inside its own
 * transaction (foldInTransaction); an edit commits first and asks for a fold after (`refit`),
 * because at the dimension limit a fold of every segment takes longer than anyone should wait for
 * an answer.
 */
import { EventEmitter } from "node:events";
import type { Pool, PoolClient } from "pg";
import { serializeState } from "../model/index.ts";
import type { Design, FoldCycleInput, FoldCycleOutput, ModelState, PageSettings, RetiredEntry } from "../model/index.ts";
import { inTransaction, release, type Queryable } from "../store/repositories/sql.ts";
import { withRetry } from "../store/retry.ts";
import { loadPageById } from "../store/repositories/pages.ts";
import {
  databaseNow, dueForFold, foldPageRow, insertAllocations, insertFoldLog, insertSnapshot, loadRetired, loadSnapshot,
  markDueAndAggregate, dueRows, pruneSnapshots, releaseFoldSessionLock, replaceRetired, segmentKeys, setModelVersion,
  thinAllocationHistory, touchFold, tryFoldLock, tryFoldSessionLock, type AggregateRow, type RetiredRow,
} from "../store/repositories/folds.ts";
import { designOf, servable, settingsOf } from "./definition.ts";
import { asServiceError } from "./errors.ts";
import { FoldThread } from "./foldThread.ts";
import { loadState } from "./modelState.ts";

/** Snapshots kept per page; serving, reporting and resuming need only the newest. */
const SNAPSHOTS_KEPT = 20;
/** PostgreSQL NOTIFY channel telling other server processes a page has a new model version. */
export const MODEL_CHANNEL = "facetwise_model";

export type FoldResult =
  | { folded: true; page: string; version: number; picks: number; dropped: number; millis: number }
  | { folded: false; page: string | null; reason: "locked" | "not-due" | "paused" | "missing" | "nothing-new" | "raced" | "stopped" };

/** How folds are computed and announced. */
export interface FoldContext {
  /** runs the engine's foldCycle (on the fold thread) */
  compute(input: FoldCycleInput): Promise<FoldCycleOutput>;
  /** send NOTIFY after each fold (PostgreSQL) */
  notify: boolean;
}

/** A fold context with its own fold thread; stop() ends the thread. */
function foldContext(notify: boolean): FoldContext & { stop(): Promise<void> } {
  const thread = new FoldThread();
  return { notify, compute: (input) => thread.run(input), stop: () => thread.stop() };
}

/** Deterministic per (page, version), so a fold can be replayed exactly. */
export function foldSeed(pageId: number, version: number): number {
  return (Math.imul(pageId, 0x9e3779b1) ^ Math.imul(version, 0x85ebca6b)) >>> 0;
}

export function retiredToEntry(row: RetiredRow): RetiredEntry {
  const { reinstateReason, ...figures } = row.figures as RetiredEntry["figures"] & { reinstateReason?: string };
  return {
    segment: row.segment, combination: row.combination, reason: row.reason, figures,
    retiredAt: row.retiredAt.getTime(), reinstatedAt: row.reinstatedAt ? row.reinstatedAt.getTime() : null,
    ...(reinstateReason === undefined ? {} : { reinstateReason }),
  };
}

function entryToRetired(e: RetiredEntry): RetiredRow {
  return {
    segment: e.segment, combination: e.combination, reason: e.reason,
    // the schema has no column for the reinstate reason; it rides along with the figures
    figures: { ...e.figures, ...(e.reinstateReason === undefined ? {} : { reinstateReason: e.reinstateReason }) },
    retiredAt: new Date(e.retiredAt), reinstatedAt: e.reinstatedAt === null ? null : new Date(e.reinstatedAt),
  };
}

/** What a fold reads before computing. */
interface FoldInputs {
  pageId: number; key: string; status: string; version: number; now: Date; lastFoldAt: Date | null;
  design: Design; settings: PageSettings; state: ModelState; segments: string[]; retired: RetiredEntry[];
}

/** `required`: an edit left the page unfolded (no last fold), so it folds even with nothing new. */
type Due = { due: true; required: boolean } | { due: false; reason: "paused" | "not-due" };

async function readInputs(q: Queryable, pageId: number, lock: boolean): Promise<{ inputs: FoldInputs; due: Due } | null> {
  const row = await foldPageRow(q, pageId, lock);
  if (!row) return null;
  const now = await databaseNow(q);
  const settings = settingsOf(row);
  const page = (await loadPageById(q, pageId))!;
  const design = designOf(page);
  const snapshot = row.modelVersion > 0 ? await loadSnapshot(q, pageId, row.modelVersion) : null;
  const due: Due = row.status === "paused" ? { due: false, reason: "paused" }
    : row.lastFoldAt && row.lastFoldAt.getTime() + settings.foldIntervalSeconds * 1000 > now.getTime() ? { due: false, reason: "not-due" }
    : { due: true, required: row.lastFoldAt === null };
  return {
    due,
    inputs: {
      pageId, key: row.key, status: row.status, version: row.modelVersion, now, lastFoldAt: row.lastFoldAt, design, settings,
      state: await loadState(q, pageId, snapshot, design, settings),
      segments: await segmentKeys(q, pageId, settings.maxSegments),
      retired: (await loadRetired(q, pageId)).map(retiredToEntry),
    },
  };
}

function cycleInput(inputs: FoldInputs, rows: AggregateRow[]): FoldCycleInput {
  return {
    design: inputs.design, settings: inputs.settings, state: inputs.state,
    // picks of combinations a page edit removed are marked folded but carry nothing into the model
    rows: rows.filter((r) => servable(inputs.design, r.combination)),
    now: inputs.now.getTime(), segments: inputs.segments, retired: inputs.retired,
    seed: foldSeed(inputs.pageId, inputs.version + 1), frozen: inputs.status === "frozen",
  };
}

/** Stores one fold's results as version + 1 (inside the transaction that marked its picks). */
async function writeResults(client: PoolClient, inputs: FoldInputs, input: FoldCycleInput, output: FoldCycleOutput, rows: AggregateRow[], started: number, notify: boolean): Promise<FoldResult> {
  const { pageId, now } = inputs;
  const version = inputs.version + 1;
  await insertSnapshot(client, pageId, version, serializeState(output.state), output.summaries, now);
  await insertAllocations(client, pageId, version, output.allocations as Record<string, unknown>, now);
  await replaceRetired(client, pageId, output.retired.map(entryToRetired));
  await setModelVersion(client, pageId, version, now);
  const picks = input.rows.reduce((s, r) => s + r.n, 0);
  const dropped = rows.reduce((s, r) => s + r.n, 0) - picks;
  const millis = performance.now() - started;
  await insertFoldLog(client, pageId, version, picks, millis, now);
  await pruneSnapshots(client, pageId, version, SNAPSHOTS_KEPT);
  await thinAllocationHistory(client, pageId, version);
  if (notify) await client.query("SELECT pg_notify($1, $2)", [MODEL_CHANNEL, `${inputs.key}:${version}`]);
  return { folded: true, page: inputs.key, version, picks, dropped, millis };
}

/**
 * One fold of one page, always (page creation and edits), inside the caller's transaction, which
 * holds or takes the page's fold lock. A paused page folds no picks but gets fresh allocations.
 */
export async function foldInTransaction(client: PoolClient, pageId: number, context: FoldContext): Promise<FoldResult> {
  if (!(await tryFoldLock(client, pageId))) return { folded: false, page: null, reason: "locked" };
  const read = await readInputs(client, pageId, true);
  if (!read) return { folded: false, page: null, reason: "missing" };
  const { inputs } = read;
  const started = performance.now();
  const rows = inputs.status === "paused" ? [] : await markDueAndAggregate(client, pageId, inputs.now, inputs.version + 1);
  const input = cycleInput(inputs, rows);
  return writeResults(client, inputs, input, await context.compute(input), rows, started, context.notify);
}

const sameRows = (a: AggregateRow[], b: AggregateRow[]) =>
  a.length === b.length && a.every((r, i) => r.segment === b[i].segment && r.combination === b[i].combination && r.n === b[i].n && r.k === b[i].k);

/** Runs folds for due pages on a timer; emits "model" (page key) after each committed fold. */
export class FoldLoop extends EventEmitter {
  private timer: NodeJS.Timeout | null = null;
  private running: Promise<unknown> | null = null;
  /**
   * The fold running for each page in this process. On the embedded database advisory locks are
   * shared by all connections, so this also keeps two folds of one page apart.
   */
  private readonly folding = new Map<number, Promise<FoldResult>>();
  /** Edits' refits, including those still waiting for a running fold (idle() waits for them too). */
  private readonly refits = new Set<Promise<FoldResult>>();
  private stopped = false;
  private readonly thread = foldContext(false);
  readonly context: FoldContext;
  private lastError = "";

  /** `crossProcess`: a real PostgreSQL that other server processes may share (locks, NOTIFY). */
  constructor(private readonly pool: Pool, private readonly crossProcess: boolean) {
    super();
    this.context = { notify: crossProcess, compute: this.thread.compute };
  }

  /** Folds one page if it is due (or always, with force); safe to call concurrently. */
  foldPage(pageId: number, force = false): Promise<FoldResult> {
    if (this.folding.has(pageId)) return Promise.resolve({ folded: false, page: null, reason: "locked" });
    const running = this.foldExclusively(pageId, force).finally(() => this.folding.delete(pageId));
    this.folding.set(pageId, running);
    return running;
  }

  /**
   * Folds a page now, once any fold of it already running in this process has ended (a page
   * edit's refit: that fold read the page before the edit, so its commit is discarded as raced).
   */
  refit(pageId: number): Promise<FoldResult> {
    const refit = (async (): Promise<FoldResult> => {
      for (let running = this.folding.get(pageId); running; running = this.folding.get(pageId)) await running.catch(() => undefined);
      // stopping: the page keeps no last fold time, so the next start folds it
      if (this.stopped) return { folded: false, page: null, reason: "stopped" };
      return this.foldPage(pageId, true);
    })();
    this.refits.add(refit);
    const forget = () => this.refits.delete(refit);
    refit.then(forget, forget);
    return refit;
  }

  private async foldExclusively(pageId: number, force: boolean): Promise<FoldResult> {
    let session: PoolClient | null = null;
    try {
      if (this.crossProcess) {
        session = await this.pool.connect();
        if (!(await tryFoldSessionLock(session, pageId))) return { folded: false, page: null, reason: "locked" };
      }
      const result = await this.fold(session ?? this.pool, pageId, force, session);
      if (result.folded) this.emit("model", result.page);
      return result;
    } catch (error) {
      throw asServiceError(error);
    } finally {
      if (session) {
        const unlocked = await releaseFoldSessionLock(session, pageId).then(() => true, () => false);
        release(session, !unlocked);
      }
    }
  }

  private async fold(q: Queryable, pageId: number, force: boolean, session: PoolClient | null): Promise<FoldResult> {
    const read = await readInputs(q, pageId, false);
    if (!read) return { folded: false, page: null, reason: "missing" };
    const { inputs, due } = read;
    if (!force && !due.due) return { folded: false, page: inputs.key, reason: due.reason };
    const started = performance.now();
    const rows = inputs.status === "paused" ? [] : await dueRows(q, pageId, inputs.now);
    if (!force && !(due.due && due.required) && rows.length === 0 && inputs.settings.halfLifeDays === null) {
      // Nothing new and no forgetting: the posterior would not move.
      await touchFold(q, pageId, inputs.now);
      return { folded: false, page: inputs.key, reason: "nothing-new" };
    }
    const input = cycleInput(inputs, rows);
    const output = await this.context.compute(input);
    const commit = async (client: PoolClient): Promise<FoldResult> => {
      if (!(await tryFoldLock(client, pageId))) return { folded: false, page: inputs.key, reason: "locked" };
      const row = await foldPageRow(client, pageId, true);
      // an edit that kept the model version (settings, status) still clears the last fold time
      if (!row || row.modelVersion !== inputs.version || row.lastFoldAt?.getTime() !== inputs.lastFoldAt?.getTime()
        || (row.status === "paused") !== (inputs.status === "paused")) {
        return { folded: false, page: inputs.key, reason: "raced" };
      }
      const marked = inputs.status === "paused" ? [] : await markDueAndAggregate(client, pageId, inputs.now, inputs.version + 1);
      if (!sameRows(marked, rows)) throw new RacedFold();
      return writeResults(client, inputs, input, output, rows, started, this.context.notify);
    };
    try {
      // a deadlock victim rolled back whole: commit again (the checks above run again too)
      return await withRetry(() => session ? transactionOn(session, commit) : inTransaction(this.pool, commit));
    } catch (error) {
      if (error instanceof RacedFold) return { folded: false, page: inputs.key, reason: "raced" };
      throw error;
    }
  }

  /** One pass over the due pages. */
  async tick(): Promise<FoldResult[]> {
    const results: FoldResult[] = [];
    for (const pageId of await dueForFold(this.pool)) {
      try {
        results.push(await this.foldPage(pageId));
      } catch (error) {
        this.complain(`page ${pageId}: ${(error as Error).message}`);
      }
    }
    return results;
  }

  /** One line per distinct failure, not one per second while the database is down. */
  private complain(message: string): void {
    if (message !== this.lastError) console.error(`facetwise: fold loop: ${message}`);
    this.lastError = message;
  }

  start(everyMs = 1000): void {
    if (this.timer) return;
    const loop = () => {
      this.running = this.tick().then(
        (results) => {
          if (results.some((r) => r.folded)) this.lastError = "";
        },
        (error: unknown) => this.complain((error as Error).message),
      ).finally(() => {
        this.running = null;
        if (this.timer) this.timer = setTimeout(loop, everyMs);
      });
    };
    this.timer = setTimeout(loop, everyMs);
  }

  /** Resolves once no fold runs in this process (edits' folds run on after their answer). */
  async idle(): Promise<void> {
    while (this.running || this.folding.size > 0 || this.refits.size > 0) {
      await this.running;
      await Promise.allSettled([...this.folding.values(), ...this.refits]);
    }
  }

  async stop(): Promise<void> {
    this.stopped = true;
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
    await this.idle();
    await this.thread.stop();
  }
}

/** Trials or conversions came due or changed between reading and committing: discard this fold, fold again next pass. */
class RacedFold extends Error {}

async function transactionOn<T>(client: PoolClient, work: (client: PoolClient) => Promise<T>): Promise<T> {
  await client.query("BEGIN");
  try {
    const result = await work(client);
    await client.query("COMMIT");
    return result;
  } catch (error) {
    await client.query("ROLLBACK").catch(() => undefined);
    throw error;
  }
}
