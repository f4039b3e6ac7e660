/**
 * Turns any failure into what a client may see: catalogue errors pass through, a lost or
 * unreachable database becomes DATABASE_UNAVAILABLE (503, safe to retry), a deadlock or
 * serialization failure that survived the server's own retries DATABASE_BUSY (503), anything else is an
 * internal error whose details stay in the server log.
 */
import { randomBytes } from "node:crypto";
import { fail, FacetwiseError } from "../errors.ts";
import { isConnectionError } from "../store/database.ts";
import { isRetryable } from "../store/retry.ts";

/** node-postgres's own words for a connection that died under a query. */
const DEAD_CLIENT = /Client has encountered a connection error and is not queryable|Client was closed and is not queryable|Connection terminated/;

export function asServiceError(error: unknown): FacetwiseError {
  if (error instanceof FacetwiseError) return error;
  if (isConnectionError(error) || DEAD_CLIENT.test((error as Error)?.message ?? "")) {
    const reason = (error as Error)?.message || (error as { code?: string })?.code || "connection lost";
    return fail("DATABASE_UNAVAILABLE", { reason });
  }
  if (isRetryable(error)) return fail("DATABASE_BUSY", { reason: (error as Error).message || "contention" });
  const internal = fail("INTERNAL", { reference: randomBytes(4).toString("hex") });
  // the original stays in the server log under the reference the client sees, on one line
  console.error(`facetwise: ${internal.message}: ${oneLine(error)}`);
  return internal;
}

/** An error in one log line: its class, code, first message line and the first frame of its stack. */
export function oneLine(error: unknown): string {
  const e = error as { name?: string; code?: unknown; message?: string; stack?: string };
  const frame = e?.stack?.split("\n").find((line) => /^\s+at /.test(line))?.trim() ?? "";
  const code = typeof e?.code === "string" ? ` [${e.code}]` : "";
  return `${e?.name ?? "Error"}${code}: ${String(e?.message ?? error).split("\n")[0].slice(0, 300)}${frame ? ` (${frame})` : ""}`;
}
