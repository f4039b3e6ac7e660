/**
 * Rate limits by token bucket (a bucket holds up to `perMinute` tokens, refills at perMinute / 60
 * per second, and each request takes one; an empty bucket answers 429 with Retry-After — RFC 6585
 * §4, RFC 9110 §10.2.3). Kept in memory per process: several server processes each allow the
 * full rate.
 *
 * - Public routes (pick, outcome): one bucket per (page, client address) and one per page, sized
 *   by the page's settings `addressRequestsPerMinute` and `pageRequestsPerMinute`; and a brake on
 *   unknown page keys, 60 per minute per address (each costs a database look-up).
 * - Admin routes: a brake on wrong admin tokens, 10 per minute per address.
 * A brake counts failures only; an address out of tries is refused 429 before it is checked again.
 */
import type { Request } from "express";
import { fail } from "../errors.ts";

/** Bucket count above which full (idle) buckets are dropped; each costs ~100 bytes. */
const PRUNE_ABOVE = 100_000;
export const WRONG_TOKENS_PER_MINUTE = 10;
export const UNKNOWN_PAGES_PER_MINUTE = 60;

interface Bucket { tokens: number; at: number; perMinute: number }

export class TokenBuckets {
  private readonly buckets = new Map<string, Bucket>();

  constructor(private readonly now: () => number = () => performance.now()) {}

  /** Refilled token count of `key` at the current time (a new bucket is full). */
  private bucket(key: string, perMinute: number): Bucket {
    const t = this.now();
    let b = this.buckets.get(key);
    if (!b) {
      if (this.buckets.size >= PRUNE_ABOVE) this.prune(t);
      b = { tokens: perMinute, at: t, perMinute };
      this.buckets.set(key, b);
    }
    b.tokens = Math.min(perMinute, b.tokens + ((t - b.at) / 60_000) * perMinute);
    b.at = t;
    b.perMinute = perMinute;
    return b;
  }

  /** Seconds until `key` has a token (0 when it has one now); takes nothing. */
  wait(key: string, perMinute: number): number {
    const b = this.bucket(key, perMinute);
    return b.tokens >= 1 ? 0 : Math.ceil(((1 - b.tokens) * 60) / perMinute);
  }

  /** Takes a token from `key` if it has one: 0, else the seconds until it will. */
  take(key: string, perMinute: number): number {
    const wait = this.wait(key, perMinute);
    if (wait === 0) this.buckets.get(key)!.tokens -= 1;
    return wait;
  }

  private prune(t: number): void {
    for (const [key, b] of this.buckets) {
      if (b.tokens + ((t - b.at) / 60_000) * b.perMinute >= b.perMinute) this.buckets.delete(key);
    }
  }
}

const limited = (what: string, seconds: number) =>
  fail("RATE_LIMITED", { what, retryAfter: Math.max(1, seconds) });

/** The client's address (the proxy's unless `trust proxy` is configured: see README). */
export const addressOf = (req: Request): string => req.ip ?? req.socket.remoteAddress ?? "unknown";

/**
 * Runs `attempt`; when it fails with the error code `failure`, the address loses one of its
 * `perMinute` tries; with none left it is refused before `attempt` runs.
 */
export async function braked<T>(buckets: TokenBuckets, req: Request, brake: { name: string; perMinute: number; failure: string; what: string }, attempt: () => Promise<T>): Promise<T> {
  const key = `${brake.name}:${addressOf(req)}`;
  const wait = buckets.wait(key, brake.perMinute);
  if (wait > 0) throw limited(brake.what, wait);
  try {
    return await attempt();
  } catch (error) {
    if ((error as { code?: string }).code === brake.failure) buckets.take(key, brake.perMinute);
    throw error;
  }
}

export const UNKNOWN_PAGE_BRAKE = { name: "u", perMinute: UNKNOWN_PAGES_PER_MINUTE, failure: "UNKNOWN_PAGE", what: "for unknown pages from your address" };
export const ADMIN_TOKEN_BRAKE = { name: "t", perMinute: WRONG_TOKENS_PER_MINUTE, failure: "UNAUTHORIZED", what: "with wrong admin tokens from your address" };

/** Public routes: the page's limits per address and in total. */
export function checkPage(buckets: TokenBuckets, req: Request, page: string, settings: { addressRequestsPerMinute: number; pageRequestsPerMinute: number }): void {
  const perAddress = buckets.take(`p:${page}:${addressOf(req)}`, settings.addressRequestsPerMinute);
  if (perAddress > 0) throw limited(`from your address to page "${page}"`, perAddress);
  const perPage = buckets.take(`p:${page}`, settings.pageRequestsPerMinute);
  if (perPage > 0) throw limited(`to page "${page}"`, perPage);
}

