/**
 * A page's version for optimistic concurrency (RFC 9110 §8.8.3 entity tags, §13.1.1 If-Match):
 * a hash of everything an admin can edit (name, status, settings, segment keys, interactions,
 * baseline, factors with their levels and values, exclusion rules). Folds do not change it, so
 * a console open for an hour can still edit; any committed edit does. Equal content gives an
 * equal version, which is safe: an edit based on that content loses nothing.
 */
import { createHash } from "node:crypto";
import { fail } from "../errors.ts";
import type { StoredPage } from "../store/repositories/pages.ts";

export function pageVersion(page: StoredPage): string {
  const { name, status, segmentBy, interactions, settings, baseline, factors, exclude } = page;
  return createHash("sha256").update(JSON.stringify({ name, status, segmentBy, interactions, settings, baseline, factors, exclude })).digest("base64url").slice(0, 22);
}

/** The version as an ETag header value (a strong entity tag). */
export const entityTag = (version: string): string => `"${version}"`;

/**
 * Throws PAGE_CHANGED (412) unless the If-Match header `ifMatch` names the page's current
 * version or is "*". Absent: no precondition. Weak tags never match (strong comparison, §8.8.3.2).
 */
export function checkIfMatch(page: StoredPage, ifMatch: string | undefined): void {
  if (ifMatch === undefined) return;
  const current = pageVersion(page);
  const tags = ifMatch.split(",").map((t) => t.trim()).filter(Boolean);
  if (tags.includes("*") || tags.includes(entityTag(current))) return;
  throw fail("PAGE_CHANGED", { page: page.key, given: ifMatch.slice(0, 80), current: entityTag(current) }, "If-Match");
}
