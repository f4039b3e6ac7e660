/**
 * Serving one visitor: the sticky rule first (a live assignment answers with the same pick),
 * otherwise a draw from the segment's allocation — or the baseline while the page is paused, or
 * the segment's leader while it is frozen — acknowledged once the pick is committed.
 */
import { randomInt, randomUUID } from "node:crypto";
import type { Pool } from "pg";
import { createRng, pickFrom, predictedOf, type Rng } from "../model/index.ts";
import { claimAssignment, ensureSegment, findLiveAssignment, type ServedPick } from "../store/repositories/picks.ts";
import { levelsOf, segmentOf, servable } from "./definition.ts";
import type { ServingCache, ServingPage } from "./serving.ts";
import type { WriteBatcher } from "./writeBatcher.ts";
import { asServiceError } from "./errors.ts";
import { checkPublicKey } from "./auth.ts";
import { normalizeContext } from "./normalizeContext.ts";
import { ContextLog } from "./contextLog.ts";

export interface PickRequest { visitor: string; context?: Record<string, string | number | boolean> }

export interface PickResponse {
  pick: string;
  combination: Record<string, { level: string; value: string }>;
  key: string;
  segment: string;
  propensity: number;
  sticky: boolean;
}

export class PickService {
  private readonly rng: Rng = createRng(randomInt(2 ** 31));
  private readonly creating = new Map<string, Promise<number>>();

  /** raw context values and their normalised form, for the report */
  readonly contexts = new ContextLog();

  constructor(private readonly pool: Pool, private readonly serving: ServingCache, private readonly batcher: WriteBatcher) {}

  async pick(pageKey: string, publicKey: string | undefined, request: PickRequest): Promise<PickResponse> {
    try {
      const page = await this.serving.get(pageKey);
      checkPublicKey(page.stored, publicKey);
      const live = await findLiveAssignment(this.pool, page.stored.id, request.visitor);
      if (live && servable(page.design, live.combination)) return this.respond(page, live, true);

      this.contexts.record(pageKey, page.stored.segmentBy, request.context);
      const segment = segmentOf(page.stored.segmentBy, normalizeContext(page.stored.segmentBy, request.context));
      const segmentId = await this.segmentId(page, segment.key, segment.context);
      const served = segmentId === null ? "*" : segment.key;
      const { combination, propensity, predicted } = this.choose(page, served);
      const claimed = await this.batcher.submit((client) => claimAssignment(client, {
        id: randomUUID(), pageId: page.stored.id, visitor: request.visitor, segmentId, combination, propensity, predictedRate: predicted,
        modelVersion: page.version, assignmentSeconds: page.settings.assignmentHours * 3600,
        windowSeconds: page.settings.attributionWindowHours * 3600,
        state: page.stored.status === "paused" ? "ignored" : "open", replaces: live?.pick ?? null,
      }), true);
      return this.respond(page, claimed.won ? { ...claimed.pick, segment: served } : claimed.pick, !claimed.won);
    } catch (error) {
      throw asServiceError(error);
    }
  }

  /** The combination, its propensity and its predicted rate (none while paused: those picks are never scored). */
  private choose(page: ServingPage, segment: string): { combination: string; propensity: number; predicted: number | null } {
    const allocation = page.allocations.get(segment) ?? page.allocations.get("*");
    if (page.stored.status === "paused") return { combination: page.baseline, propensity: 1, predicted: null };
    if (page.stored.status === "frozen") {
      const leader = page.leaders.get(segment) ?? page.leaders.get("*");
      const combination = leader && servable(page.design, leader) ? leader : page.baseline;
      return { combination, propensity: 1, predicted: allocation ? predictedOf(allocation, combination) : null };
    }
    if (!allocation) return { combination: page.baseline, propensity: 1, predicted: null };
    return pickFrom(allocation, this.rng);
  }

  /** The segment's row id, created on first sight; null once the page has maxSegments (served pooled). */
  private async segmentId(page: ServingPage, key: string, context: Record<string, string>): Promise<number | null> {
    const known = page.segmentIds.get(key);
    if (known !== undefined) return known;
    if (page.segmentIds.size >= page.settings.maxSegments) return null;
    // concurrent first visitors of a new segment share one insert
    const slot = `${page.stored.id}\u0000${key}`;
    let creating = this.creating.get(slot);
    if (!creating) {
      creating = ensureSegment(this.pool, page.stored.id, key, context).finally(() => this.creating.delete(slot));
      this.creating.set(slot, creating);
    }
    const id = await creating;
    page.segmentIds.set(key, id);
    return id;
  }

  private respond(page: ServingPage, pick: ServedPick, sticky: boolean): PickResponse {
    return {
      pick: pick.pick, combination: levelsOf(page.stored, pick.combination), key: pick.combination,
      segment: pick.segment, propensity: pick.propensity, sticky,
    };
  }
}
