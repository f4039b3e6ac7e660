/**
 * Token buckets as RFC 2697 §3 (single rate three color marker) defines one: a bucket of size CBS
 * starts full, is refilled at CIR up to CBS, and a packet (here a request) passes when a token is
 * there. Here CBS = perMinute and CIR = perMinute / 60 per second; the clock is injected.
 */
import { describe, expect, it } from "vitest";
import { TokenBuckets } from "../../src/http/rateLimit.ts";

describe("TokenBuckets", () => {
  it("lets a full bucket's worth through, then waits one refill interval per token", () => {
    let now = 0;
    const buckets = new TokenBuckets(() => now);
    for (let i = 0; i < 6; i++) expect(buckets.take("a", 6)).toBe(0);
    expect(buckets.take("a", 6)).toBe(10); // 6 per minute: one token every 10 s
    now = 5_000;
    expect(buckets.take("a", 6)).toBe(5);
    now = 10_000;
    expect(buckets.take("a", 6)).toBe(0);
    expect(buckets.take("a", 6)).toBe(10);
    // refills cap at the bucket size
    now = 10 * 60_000;
    for (let i = 0; i < 6; i++) expect(buckets.take("a", 6)).toBe(0);
    expect(buckets.take("a", 6)).toBeGreaterThan(0);
  });

  it("keeps keys apart, and wait() takes nothing", () => {
    const buckets = new TokenBuckets(() => 0);
    expect(buckets.take("x", 1)).toBe(0);
    expect(buckets.take("x", 1)).toBe(60);
    expect(buckets.wait("y", 1)).toBe(0);
    expect(buckets.wait("y", 1)).toBe(0);
    expect(buckets.take("y", 1)).toBe(0);
  });
});
