/**
 * What serving needs in memory per page: its definition and design, and the allocation (an
 * alias table, O(1) per draw) of every segment at the current model version. Rebuilt when the
 * version or the page changes — learned at once in this process (the fold loop's event), within
 * a poll interval from other processes (polling page.model_version works on every database;
 * LISTEN/NOTIFY on a real PostgreSQL makes it immediate).
 */
import pg from "pg";
import type { Allocation, Design, PageSettings, SegmentSummary } from "../model/index.ts";
import { fail } from "../errors.ts";
import { loadPage, pageVersions, type StoredPage } from "../store/repositories/pages.ts";
import { loadAllocations, loadSnapshot } from "../store/repositories/folds.ts";
import { segmentIds } from "../store/repositories/picks.ts";
import { baselineKey, designOf, settingsOf } from "./definition.ts";
import { MODEL_CHANNEL } from "./folds.ts";

export interface ServingPage {
  stored: StoredPage;
  design: Design;
  settings: PageSettings;
  baseline: string;
  version: number;
  updatedAt: number;
  allocations: Map<string, Allocation>;
  /** leader per segment at this version, for frozen pages */
  leaders: Map<string, string>;
  segmentIds: Map<string, number>;
}

export class ServingCache {
  private readonly pages = new Map<string, Promise<ServingPage>>();
  private poller: NodeJS.Timeout | null = null;
  private listener: pg.Client | null = null;
  private reconnecting: NodeJS.Timeout | null = null;
  private stopped = false;

  constructor(private readonly pool: pg.Pool) {}

  /** The page as served now; throws UNKNOWN_PAGE. */
  get(key: string): Promise<ServingPage> {
    let entry = this.pages.get(key);
    if (!entry) {
      entry = this.load(key);
      this.pages.set(key, entry);
      entry.catch(() => this.pages.delete(key));
    }
    return entry;
  }

  /** Forget a page so the next request reloads it (after a fold or an edit). */
  invalidate(key: string): void {
    this.pages.delete(key);
  }

  private async load(key: string): Promise<ServingPage> {
    const stored = await loadPage(this.pool, key);
    if (!stored) throw fail("UNKNOWN_PAGE", { page: key }, "page");
    const design = designOf(stored);
    const snapshot = stored.modelVersion > 0 ? await loadSnapshot(this.pool, stored.id, stored.modelVersion) : null;
    const summaries = (snapshot?.summary ?? {}) as Record<string, SegmentSummary>;
    const leaders = new Map<string, string>();
    for (const [segment, summary] of Object.entries(summaries)) if (summary?.leader) leaders.set(segment, summary.leader.combination);
    return {
      stored, design, settings: settingsOf(stored), baseline: baselineKey(design),
      version: stored.modelVersion, updatedAt: stored.updatedAt.getTime(),
      allocations: (await loadAllocations(this.pool, stored.id, stored.modelVersion)) as Map<string, Allocation>,
      leaders, segmentIds: await segmentIds(this.pool, stored.id),
    };
  }

  /** Polls the versions of the cached pages; a changed page is reloaded on its next request. */
  startPolling(everyMs = 1000): void {
    const poll = async () => {
      const keys = [...this.pages.keys()];
      if (keys.length === 0) return;
      const versions = await pageVersions(this.pool, keys);
      for (const key of keys) {
        const entry = this.pages.get(key);
        const now = versions.get(key);
        if (!entry || !now) {
          this.pages.delete(key);
          continue;
        }
        const page = await entry.catch(() => null);
        if (!page || page.version !== now.version || page.updatedAt !== now.updatedAt) this.pages.delete(key);
      }
    };
    const loop = () => {
      poll().catch(() => undefined).finally(() => {
        if (this.poller) this.poller = setTimeout(loop, everyMs);
      });
    };
    this.poller = setTimeout(loop, everyMs);
  }

  /**
   * On a real PostgreSQL: hear other processes' folds at once (polling stays as the fallback).
   * A lost connection (a database restart, a terminated backend) is opened again with backoff
   * (0.5 s doubling to 30 s); notifications sent meanwhile are lost, so every cached page is
   * reloaded once it is back.
   */
  async listen(url: string): Promise<void> {
    const client = new pg.Client({ connectionString: url });
    let lost = false;
    const onLost = () => {
      if (lost) return;
      lost = true;
      if (this.listener !== client) return; // stopped, or never got as far as listening
      this.listener = null;
      this.reconnect(url, 0);
    };
    client.on("error", onLost);
    client.on("end", onLost);
    try {
      await client.connect();
      client.on("notification", (message) => {
        const key = message.payload?.slice(0, message.payload.lastIndexOf(":"));
        if (key) this.invalidate(key);
      });
      await client.query(`LISTEN ${MODEL_CHANNEL}`);
    } catch (error) {
      lost = true;
      await client.end().catch(() => undefined);
      throw error;
    }
    if (this.stopped) {
      lost = true;
      await client.end().catch(() => undefined);
      return;
    }
    this.listener = client;
  }

  private reconnect(url: string, attempt: number): void {
    if (this.stopped) return;
    this.reconnecting = setTimeout(() => {
      this.reconnecting = null;
      this.listen(url).then(
        () => this.pages.clear(),
        () => this.reconnect(url, attempt + 1),
      );
    }, Math.min(30_000, 500 * 2 ** attempt));
  }

  async stop(): Promise<void> {
    this.stopped = true;
    if (this.poller) clearTimeout(this.poller);
    this.poller = null;
    if (this.reconnecting) clearTimeout(this.reconnecting);
    this.reconnecting = null;
    const listener = this.listener;
    this.listener = null;
    await listener?.end().catch(() => undefined);
  }
}
