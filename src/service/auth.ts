/**
 * Keys. The admin token is created on first start (printed once, stored as a SHA-256 hash) and
 * FACETWISE_ADMIN_TOKEN, when set, is accepted too. A page's public key (X-Page-Key) only lets a
 * landing page pick and report outcomes; it is not a secret (it ships in the page's HTML).
 */
import { createHash, randomBytes, timingSafeEqual } from "node:crypto";
import type { Pool } from "pg";
import { fail } from "../errors.ts";
import { findApiKey, hasAdminKey, insertApiKey } from "../store/repositories/apiKeys.ts";
import type { StoredPage } from "../store/repositories/pages.ts";

export const hashKey = (key: string): string => createHash("sha256").update(key).digest("hex");

export function newPublicKey(): string {
  return `pk_${randomBytes(12).toString("base64url")}`;
}

export function checkPublicKey(page: Pick<StoredPage, "publicKey" | "key">, given: string | undefined): void {
  if (!given) throw fail("UNAUTHORIZED", { reason: `Send the page's public key in the X-Page-Key header (page "${page.key}")` });
  const a = Buffer.from(hashKey(given));
  const b = Buffer.from(hashKey(page.publicKey));
  if (!timingSafeEqual(a, b)) throw fail("FORBIDDEN", { reason: `X-Page-Key is not the public key of page "${page.key}"` });
}

/** Shortest FACETWISE_ADMIN_TOKEN accepted: 32 characters (≥ 128 bits if random base64). */
export const MIN_ADMIN_TOKEN_LENGTH = 32;

/** Refuses a FACETWISE_ADMIN_TOKEN too short to withstand guessing. */
export function checkAdminToken(token: string | undefined): void {
  if (token === undefined || token.length >= MIN_ADMIN_TOKEN_LENGTH) return;
  throw fail("INVALID_OPTION", {
    option: "FACETWISE_ADMIN_TOKEN",
    reason: `it has ${token.length} characters; use at least ${MIN_ADMIN_TOKEN_LENGTH} random ones (for example the output of: openssl rand -base64 32), or unset it and use the token printed at first start`,
  });
}

export class AuthService {
  /** hashes recently confirmed, so each admin request does not cost a query */
  private readonly confirmed = new Map<string, number>();

  constructor(private readonly pool: Pool, private readonly envToken: string | undefined) {
    checkAdminToken(envToken);
  }

  /** Creates the admin token if the database has none; returns it (to print once) or null. */
  async ensureAdminToken(): Promise<string | null> {
    if (await hasAdminKey(this.pool)) return null;
    const token = `fw_admin_${randomBytes(24).toString("base64url")}`;
    await insertApiKey(this.pool, { scope: "admin", pageId: null, hash: hashKey(token), prefix: token.slice(0, 13) });
    return token;
  }

  /** Throws UNAUTHORIZED unless `header` is "Bearer <admin token>". */
  async requireAdmin(header: string | undefined): Promise<void> {
    const match = /^Bearer\s+(\S+)\s*$/i.exec(header ?? "");
    if (!match) throw fail("UNAUTHORIZED", { reason: "Send the admin token as 'Authorization: Bearer <token>' (printed at first start)" });
    const hash = hashKey(match[1]);
    if (this.envToken && timingSafeEqual(Buffer.from(hash), Buffer.from(hashKey(this.envToken)))) return;
    const seen = this.confirmed.get(hash);
    if (seen !== undefined && Date.now() - seen < 60_000) return;
    const key = await findApiKey(this.pool, hash);
    if (!key || key.scope !== "admin") throw fail("UNAUTHORIZED", { reason: "The admin token is not valid; use the token printed at first start or FACETWISE_ADMIN_TOKEN" });
    this.confirmed.set(hash, Date.now());
  }
}
