/**
 * Retrying a transaction PostgreSQL aborted to resolve contention: deadlock_detected (40P01) and
 * serialization_failure (40001) mean "nothing was written, run it again" (PostgreSQL manual,
 * "Transaction Isolation" §13.2 and Appendix A, error codes). Every retried transaction must be
 * safe to run again from its start, which is true of one that rolled back.
 */

/** SQLSTATEs after which the whole transaction may simply be run again. */
const RETRYABLE_SQLSTATES = new Set(["40P01", "40001"]);

/** True when `error` (pg's, or one wrapping it as `cause`) is a deadlock or serialization failure. */
export function isRetryable(error: unknown): boolean {
  for (let e = error, depth = 0; e && typeof e === "object" && depth < 5; e = (e as { cause?: unknown }).cause, depth++) {
    const code = (e as { code?: unknown }).code;
    if (typeof code === "string" && RETRYABLE_SQLSTATES.has(code)) return true;
  }
  return false;
}

export interface RetryOptions {
  /** runs in all, the first included (default 5) */
  attempts?: number;
  /** base of the jittered exponential pause between runs, ms (default 10) */
  baseMs?: number;
}

/**
 * Runs `work` until it succeeds, it fails with an error that is not retryable, or the attempts
 * are used up (then the last error is thrown; the HTTP layer answers it 503 with Retry-After).
 * The pause is random in [0, base·2^attempt) so two victims of one deadlock do not collide again.
 */
export async function withRetry<T>(work: () => Promise<T>, options: RetryOptions = {}): Promise<T> {
  const attempts = options.attempts ?? 5;
  const baseMs = options.baseMs ?? 10;
  for (let attempt = 1; ; attempt++) {
    try {
      return await work();
    } catch (error) {
      if (attempt >= attempts || !isRetryable(error)) throw error;
      await new Promise((resolve) => setTimeout(resolve, Math.random() * baseMs * 2 ** attempt));
    }
  }
}
