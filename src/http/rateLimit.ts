/**
 * Rate limits by token bucket (a bucket holds up to `perMinute` tokens, refills at perMinute / 60
 * per second, and each request takes one; an empty bucket answers 429 with Retry-After — RFC 6585
 * §4, RFC 9110 §10.2.3). Kept in memory per process: several server processes each allow the
 * full rate.
 *
 * - Public routes (pick, outcome): one bucket per (page, client address) and one per page, sized
 *   by the page's settings `addressRequestsPerMinute` and `pageRequestsPerMinute`, and — before the
 *   page is looked up, so unknown page keys cannot be hammered either — one per address across
 *   all pages at ten times the default per-address rate.
 * - Admin routes: a brake on wrong admin tokens, 10 per minute per address; an address out of
 *   tries is refused 429 before its token is even checked.
 */
import type { NextFunction, Request, Response } from "express";
import { fail } from "../errors.ts";
import { defaultSettings } from "../model/index.ts";

/** Bucket count above which full (idle) buckets are dropped; each costs ~100 bytes. */
const PRUNE_ABOVE = 100_000;
export const WRONG_TOKENS_PER_MINUTE = 10;

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

/** Public routes: the per-address limit across pages (call before looking the page up). */
export function checkAddress(buckets: TokenBuckets, req: Request): void {
  const wait = buckets.take(`a:${addressOf(req)}`, defaultSettings.addressRequestsPerMinute * 10);
  if (wait > 0) throw limited("from your address", wait);
}

/** Public routes: the page's limits per address and in total. */
export function checkPage(buckets: TokenBuckets, req: Request, page: string, settings: { addressRequestsPerMinute: number; pageRequestsPerMinute: number }): void {
  const perAddress = buckets.take(`p:${page}:${addressOf(req)}`, settings.addressRequestsPerMinute);
  if (perAddress > 0) throw limited(`from your address to page "${page}"`, perAddress);
  const perPage = buckets.take(`p:${page}`, settings.pageRequestsPerMinute);
  if (perPage > 0) throw limited(`to page "${page}"`, perPage);
}

/**
 * Wraps the admin check: an address with no wrong-token tries left is refused at once; each
 * refused token costs a try.
 */
export function adminBrake(buckets: TokenBuckets, check: (req: Request) => Promise<void>) {
  return async (req: Request, _res: Response, next: NextFunction) => {
    const key = `t:${addressOf(req)}`;
    const wait = buckets.wait(key, WRONG_TOKENS_PER_MINUTE);
    if (wait > 0) throw limited("with wrong admin tokens from your address", wait);
    try {
      await check(req);
    } catch (error) {
      if ((error as { code?: string }).code === "UNAUTHORIZED") buckets.take(key, WRONG_TOKENS_PER_MINUTE);
      throw error;
    }
    next();
  };
}
