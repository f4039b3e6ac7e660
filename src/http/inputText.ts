/**
 * Text PostgreSQL cannot store, refused at the door with a 400 naming the field: a NUL character
 * (PostgreSQL text and jsonb reject U+0000) and a lone UTF-16 surrogate (not a Unicode scalar
 * value, so it has no UTF-8 encoding — RFC 3629 §3; it would be stored as U+FFFD and no longer
 * equal what the client sent). Object keys are checked as well as values. Also a request path
 * whose percent-encoding does not decode to UTF-8 (RFC 3986 §2.1) is refused here, before any
 * route tries to decode its parameters.
 */
import type { NextFunction, Request, Response } from "express";
import { fail } from "../errors.ts";

const LONE_SURROGATE = /[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/;

/** What is wrong with `text`, or null. */
export function unusableText(text: string): string | null {
  if (text.includes("\u0000")) return "contains a NUL character (\\u0000); remove it";
  if (LONE_SURROGATE.test(text)) return "contains a lone UTF-16 surrogate, which is not valid Unicode; send well-formed text";
  return null;
}

/** The first unusable string in `value` (a parsed JSON body or query), as a field path and a reason. */
export function findUnusableText(value: unknown, path: string[] = [], depth = 0): { field: string; reason: string } | null {
  const at = (parts: string[]) => parts.join(".") || "body";
  if (typeof value === "string") {
    const reason = unusableText(value);
    return reason ? { field: at(path), reason: `the value ${reason}` } : null;
  }
  if (value === null || typeof value !== "object" || depth > 64) return null;
  for (const [key, item] of Object.entries(value)) {
    const keyReason = unusableText(key);
    if (keyReason) return { field: at([...path, key]), reason: `the name ${keyReason}` };
    const found = findUnusableText(item, [...path, key], depth + 1);
    if (found) return found;
  }
  return null;
}

/** Refuses a path that does not percent-decode (e.g. `/pages/%ff/picks`). */
export function requireDecodablePath(req: Request, _res: Response, next: NextFunction): void {
  try {
    decodeURIComponent(req.path);
  } catch {
    throw fail("INVALID_REQUEST", { field: "path", reason: "the address has percent-encoding that is not UTF-8 (such as %ff); encode it as UTF-8" }, "path");
  }
  next();
}

/** Refuses a body or query string holding text PostgreSQL cannot store. Runs after the JSON parser. */
export function requireUsableText(req: Request, _res: Response, next: NextFunction): void {
  const found = findUnusableText(req.body) ?? findUnusableText(req.query, ["query"]);
  if (found) throw fail("INVALID_REQUEST", found, found.field);
  next();
}
