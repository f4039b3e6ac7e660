/**
 * Recording a conversion against a pick: idempotent by event id (unique per page), acknowledged
 * once committed. A conversion after the attribution window is stored but does not count, and
 * the answer says so.
 */
import { randomUUID } from "node:crypto";
import { fail } from "../errors.ts";
import { recordOutcome } from "../store/repositories/outcomes.ts";
import type { ServingCache } from "./serving.ts";
import type { WriteBatcher } from "./writeBatcher.ts";
import { asServiceError } from "./errors.ts";
import { checkPublicKey } from "./auth.ts";

export interface OutcomeRequest { pick: string; event?: string; value?: number }
export interface OutcomeResponse { accepted: true; duplicate: boolean; counted: boolean; reason?: string }

export class OutcomeService {
  constructor(private readonly serving: ServingCache, private readonly batcher: WriteBatcher) {}

  async record(pageKey: string, publicKey: string | undefined, request: OutcomeRequest): Promise<OutcomeResponse> {
    try {
      const page = await this.serving.get(pageKey);
      checkPublicKey(page.stored, publicKey);
      const result = await this.batcher.submit((client) => recordOutcome(client, {
        pageId: page.stored.id, pick: request.pick, event: request.event ?? randomUUID(), value: request.value ?? null,
      }), true);
      switch (result.kind) {
        case "unknown-pick":
          throw fail("UNKNOWN_PICK", { pick: request.pick, page: pageKey }, "pick");
        case "event-reused":
          throw fail("EVENT_REUSED", { event: request.event ?? "", other: result.pick, pick: request.pick }, "event");
        case "duplicate":
          return { accepted: true, duplicate: true, counted: false, reason: `event "${request.event}" was already recorded; it is counted once` };
        case "counted":
          return { accepted: true, duplicate: false, counted: true };
        case "already-converted":
          return { accepted: true, duplicate: false, counted: false, reason: "this pick had already converted; one conversion per pick counts" };
        case "late":
          return {
            accepted: true, duplicate: false, counted: false,
            reason: `reported after the attribution window closed at ${result.windowEndsAt.toISOString()}; stored but not counted`,
          };
      }
    } catch (error) {
      throw asServiceError(error);
    }
  }
}
