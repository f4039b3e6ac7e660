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

export function toHttpError(error: unknown, bodyLimit: string): FacetwiseError {
  const e = error as { type?: string; message?: string };
  if (e?.type === "entity.parse.failed") return fail("MALFORMED_JSON", { reason: (e.message ?? "").split("\n")[0].slice(0, 200) }, "body");
  if (e?.type === "entity.too.large") return fail("BODY_TOO_LARGE", { limit: bodyLimit }, "body");
  if (e?.type === "encoding.unsupported" || e?.type === "charset.unsupported" || e?.type === "entity.verify.failed" || e?.type === "request.aborted") {
    return fail("INVALID_REQUEST", { field: "body", reason: e.message ?? "unreadable body" }, "body");
  }
  return asServiceError(error);
}

export function errorHandler(bodyLimit: string) {
  return (error: unknown, req: Request, res: Response, _next: NextFunction): void => {
    const mapped = toHttpError(error, bodyLimit);
    if (mapped.code === "INTERNAL") console.error(`facetwise: ${req.method} ${req.path} failed: ${mapped.message}`);
    if (mapped.status === 503) res.set("Retry-After", String(RETRY_AFTER_SECONDS));
    if (res.headersSent) {
      res.end();
      return;
    }
    res.status(mapped.status).json({ error: mapped.toJSON() });
  };
}
