/**
 * Error mapping: every failure leaves as `{error: {code, message, field?}}` with the catalogue
 * status. Body-parser failures become MALFORMED_JSON / BODY_TOO_LARGE; an unavailable database is
 * 503 with Retry-After (so is a database too busy with concurrent writes); anything unexpected is logged here and answered 500 with a reference —
 * no stack trace ever leaves the server.
 */
import type { NextFunction, Request, Response } from "express";
import { fail, FacetwiseError } from "../errors.ts";
import { asServiceError } from "../service/errors.ts";

const RETRY_AFTER_SECONDS = 5;

/** A byte count as the limit is configured: 16384 → "16 kB (16384 bytes)". */
export function sizeInWords(bytes: number): string {
  const unit = bytes >= 1024 * 1024 ? ["MB", 1024 * 1024] as const : ["kB", 1024] as const;
  return `${Number((bytes / unit[1]).toFixed(1))} ${unit[0]} (${bytes} bytes)`;
}

export function toHttpError(error: unknown, bodyLimit: string): FacetwiseError {
  const e = error as { type?: string; message?: string; body?: unknown; limit?: unknown };
  if (e?.type === "entity.parse.failed") {
    // strict parsing refuses valid JSON that is not an object or list ("hello", 42): say that
    if (typeof e.body === "string" && isJson(e.body)) {
      return fail("INVALID_REQUEST", { field: "body", reason: `the body is a JSON ${typeof JSON.parse(e.body)}, not an object: send a JSON object, {…}` }, "body");
    }
    return fail("MALFORMED_JSON", { reason: (e.message ?? "").split("\n")[0].slice(0, 200) }, "body");
  }
  if (error instanceof URIError) return fail("INVALID_REQUEST", { field: "path", reason: "the address does not percent-decode to UTF-8; encode it as UTF-8" }, "path");
  // the parser reports the limit of the route that refused the body (public routes have a smaller one)
  if (e?.type === "entity.too.large") return fail("BODY_TOO_LARGE", { limit: typeof e.limit === "number" ? sizeInWords(e.limit) : bodyLimit }, "body");
  if (e?.type === "encoding.unsupported" || e?.type === "charset.unsupported" || e?.type === "entity.verify.failed" || e?.type === "request.aborted") {
    return fail("INVALID_REQUEST", { field: "body", reason: e.message ?? "unreadable body" }, "body");
  }
  return asServiceError(error);
}

function isJson(text: string): boolean {
  try {
    JSON.parse(text);
    return true;
  } catch {
    return false;
  }
}

export function errorHandler(bodyLimit: string) {
  return (error: unknown, _req: Request, res: Response, _next: NextFunction): void => {
    const mapped = toHttpError(error, bodyLimit);
    if (mapped.status === 503) res.set("Retry-After", String(RETRY_AFTER_SECONDS));
    if (mapped.status === 429) res.set("Retry-After", String(mapped.params.retryAfter));
    if (res.headersSent) {
      res.end();
      return;
    }
    const body = mapped.toJSON();
    // one path style for every field: the engine's "exclude[0].photo" reads "exclude.0.photo", as zod's paths do
    if (body.field) body.field = body.field.replace(/\[(\d+)\]/g, ".$1");
    res.status(mapped.status).json({ error: body });
  };
}
