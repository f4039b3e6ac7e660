/**
 * The fold loop. Per page, every foldIntervalSeconds: under the page's advisory transaction lock
 * (one folder across all processes), mature the open picks (converted, or attribution window
 * closed), aggregate them, call the engine's foldCycle — the only place the model's maths runs —
 * and store the new snapshot, allocations, retired list and model version in the same transaction
 * that marks the picks folded. A crash before COMMIT leaves the picks open for the next fold; a
 * crash after leaves them folded: no pick is folded twice or lost.
 */
import { EventEmitter } from "node:events";
import type { Pool, PoolClient } from "pg";
import { deserializeState, foldCycle, initialState, serializeState } from "../model/index.ts";
import type { RetiredEntry } from "../model/index.ts";
import { inTransaction } from "../store/repositories/sql.ts";
import { loadPageById } from "../store/repositories/pages.ts";
import {
  databaseNow, dueForFold, insertAllocations, insertFoldLog, insertSnapshot, loadRetired, loadSnapshot, lockedPageRow,
  matureAndAggregate, pruneSnapshots, replaceRetired, segmentKeys, setModelVersion, thinAllocationHistory, touchFold, tryFoldLock,
  type RetiredRow,
} from "../store/repositories/folds.ts";
import { designOf, servable, settingsOf } from "./definition.ts";
import { asServiceError } from "./errors.ts";

/** Snapshots kept per page; serving, reporting and resuming need only the newest. */
const SNAPSHOTS_KEPT = 20;
/** PostgreSQL NOTIFY channel telling other server processes a page has a new model version. */
export const MODEL_CHANNEL = "facetwise_model";

export type FoldResult =
  | { folded: true; page: string; version: number; picks: number; dropped: number; millis: number }
  | { folded: false; page: string | null; reason: "locked" | "not-due" | "paused" | "missing" | "nothing-new" };

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

/**
 * One fold of one page inside the caller's transaction (which must hold, or be about to take, the
 * page's fold lock). `force` folds even when not due — page creation and edits use it to build
 * allocations for the new design right away.
 */
export async function foldInTransaction(client: PoolClient, pageId: number, force: boolean, notify: boolean): Promise<FoldResult> {
  if (!(await tryFoldLock(client, pageId))) return { folded: false, page: null, reason: "locked" };
  const row = await lockedPageRow(client, pageId);
  if (!row) return { folded: false, page: null, reason: "missing" };
  const now = await databaseNow(client);
  const settings = settingsOf(row);
  if (!force) {
    if (row.status === "paused") return { folded: false, page: row.key, reason: "paused" };
    if (row.lastFoldAt && row.lastFoldAt.getTime() + settings.foldIntervalSeconds * 1000 > now.getTime()) {
      return { folded: false, page: row.key, reason: "not-due" };
    }
  }
  const started = performance.now();
  const page = (await loadPageById(client, pageId))!;
  const design = designOf(page);
  const snapshot = row.modelVersion > 0 ? await loadSnapshot(client, pageId, row.modelVersion) : null;
  const state = snapshot ? deserializeState(snapshot.state) : initialState(design, settings);
  const version = row.modelVersion + 1;
  // Paused pages do not learn: their matured picks wait for the first fold after resume.
  const matured = row.status === "paused" ? [] : await matureAndAggregate(client, pageId, version);
  // Picks of combinations a page edit removed are marked folded but carry nothing into the model.
  const rows = matured.filter((r) => servable(design, r.combination));
  const dropped = matured.reduce((s, r) => s + r.n, 0) - rows.reduce((s, r) => s + r.n, 0);
  if (!force && matured.length === 0 && settings.halfLifeDays === null) {
    // Nothing new and no forgetting: the posterior would not move; only re-sample later.
    await touchFold(client, pageId, now);
    return { folded: false, page: row.key, reason: "nothing-new" };
  }
  const segments = await segmentKeys(client, pageId, settings.maxSegments);
  const retired = (await loadRetired(client, pageId)).map(retiredToEntry);
  const result = foldCycle({
    design, settings, state, rows, now: now.getTime(), segments, retired,
    seed: foldSeed(pageId, version), frozen: row.status === "frozen",
  });
  await insertSnapshot(client, pageId, version, serializeState(result.state), result.summaries, now);
  await insertAllocations(client, pageId, version, result.allocations as Record<string, unknown>, now);
  await replaceRetired(client, pageId, result.retired.map(entryToRetired));
  await setModelVersion(client, pageId, version, now);
  const picks = rows.reduce((s, r) => s + r.n, 0);
  const millis = performance.now() - started;
  await insertFoldLog(client, pageId, version, picks, millis, now);
  await pruneSnapshots(client, pageId, version, SNAPSHOTS_KEPT);
  await thinAllocationHistory(client, pageId, version);
  if (notify) await client.query("SELECT pg_notify($1, $2)", [MODEL_CHANNEL, `${row.key}:${version}`]);
  return { folded: true, page: row.key, version, picks, dropped, millis };
}

/** Runs folds for due pages on a timer; emits "model" (page key) after each committed fold. */
export class FoldLoop extends EventEmitter {
  private timer: NodeJS.Timeout | null = null;
  private running: Promise<void> | null = null;
  /** On the embedded database advisory locks are shared by all connections: also exclude in-process. */
  private readonly folding = new Set<number>();

  constructor(private readonly pool: Pool, private readonly notify: boolean) {
    super();
  }

  /** Folds one page now if it is due (or always, with force); safe to call concurrently. */
  async foldPage(pageId: number, force = false): Promise<FoldResult> {
    if (this.folding.has(pageId)) return { folded: false, page: null, reason: "locked" };
    this.folding.add(pageId);
    try {
      const result = await inTransaction(this.pool, (client) => foldInTransaction(client, pageId, force, this.notify));
      if (result.folded) this.emit("model", result.page);
      return result;
    } catch (error) {
      throw asServiceError(error);
    } finally {
      this.folding.delete(pageId);
    }
  }

  /** One pass over the due pages. */
  async tick(): Promise<FoldResult[]> {
    const results: FoldResult[] = [];
    for (const pageId of await dueForFold(this.pool)) {
      try {
        results.push(await this.foldPage(pageId));
      } catch (error) {
        console.error(`facetwise: fold of page ${pageId} failed: ${(error as Error).message}`);
      }
    }
    return results;
  }

  start(everyMs = 1000): void {
    if (this.timer) return;
    const loop = () => {
      this.running = this.tick().then(
        () => undefined,
        (error: unknown) => console.error(`facetwise: fold loop: ${(error as Error).message}`),
      ).finally(() => {
        this.running = null;
        if (this.timer) this.timer = setTimeout(loop, everyMs);
      });
    };
    this.timer = setTimeout(loop, everyMs);
  }

  async stop(): Promise<void> {
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
    await this.running;
  }
}
